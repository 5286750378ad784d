"""Alarm kinds, states and the urgency order, held to ISA-18.2 alarm-management practice.

Sources: the state names are those of ISA-18.2 / IEC 62682 (normal, unacknowledged,
acknowledged, returned-to-normal unacknowledged, shelved); that priority 1 is the most urgent
and that a shelved alarm is taken out of annunciation are common practice in alarm management.
"""

from __future__ import annotations

import json
import tomllib
from dataclasses import dataclass
from pathlib import Path

from hypothesis import given
from hypothesis import strategies as st

from linewatch.domain.alarm_states import (
    DEFAULT_PRIORITIES,
    MOST_URGENT,
    OPEN_STATES,
    AlarmKind,
    AlarmState,
    by_urgency,
    urgency,
    urgency_rank,
)

ROOT = Path(__file__).resolve().parents[3]
ANNUNCIATED = (AlarmState.UNACKNOWLEDGED, AlarmState.ACKNOWLEDGED,
               AlarmState.RETURNED_UNACKNOWLEDGED)
states = st.sampled_from(list(AlarmState))
priorities = st.integers(1, 99)  # the range [alarms.priorities] accepts


def test_the_states_are_the_five_of_isa_18_2() -> None:
    # ISA-18.2's states, in the hyphenated spelling linewatch has always written
    assert {s.value for s in AlarmState} == {
        "normal", "unacknowledged", "acknowledged", "returned-unacknowledged", "shelved"}
    # every state but normal (returned and acknowledged: the alarm is over) is still open
    assert set(OPEN_STATES) == set(AlarmState) - {AlarmState.NORMAL}


def test_members_are_their_strings_in_text_and_json() -> None:
    for member in (*AlarmKind, *AlarmState):
        assert isinstance(member, str) and member == member.value
        assert f"{member}" == str(member) == member.value
        assert json.dumps({"k": member}) == json.dumps({"k": member.value})


def test_priority_one_is_the_most_urgent_and_out_of_spec_gets_it() -> None:
    assert MOST_URGENT == 1
    # product already outside the specification outranks a process signal, which outranks the
    # health of the data feed
    assert DEFAULT_PRIORITIES[AlarmKind.OUT_OF_SPEC] == MOST_URGENT
    assert list(AlarmKind) == sorted(AlarmKind, key=DEFAULT_PRIORITIES.__getitem__)


def test_the_default_priorities_are_the_ones_the_example_config_documents() -> None:
    # config/linewatch.example.toml: "These are the defaults." -- what users read
    example = ROOT / "config" / "linewatch.example.toml"
    documented = tomllib.loads(example.read_text(encoding="utf-8"))["alarms"]["priorities"]
    assert documented == dict(DEFAULT_PRIORITIES)
    assert set(documented) == set(AlarmKind)


@given(st.sampled_from(ANNUNCIATED), priorities, priorities)
def test_a_lower_priority_number_ranks_first(state: AlarmState, p: int, q: int) -> None:
    assert (urgency_rank(state, p) < urgency_rank(state, q)) == (p < q)


@given(states, priorities, st.floats(0, 1e9), st.integers(1, 10**6))
def test_annunciated_before_shelved_before_closed_whatever_the_priority(
    state: AlarmState, priority: int, raised_at: float, alarm_id: int
) -> None:
    # a shelved alarm is out of annunciation: even a priority-99 alarm that still asks for
    # attention comes before it; an alarm back to normal and acknowledged comes last
    key = urgency(state, priority, raised_at, alarm_id)
    for annunciated in ANNUNCIATED:
        if state in (AlarmState.SHELVED, AlarmState.NORMAL):
            assert urgency(annunciated, 99, raised_at, alarm_id) < key
    if state != AlarmState.NORMAL:
        assert key < urgency(AlarmState.NORMAL, MOST_URGENT, raised_at, alarm_id)


def test_within_a_priority_the_newest_comes_first() -> None:
    older = urgency(AlarmState.UNACKNOWLEDGED, 2, 100.0, 1)
    newer = urgency(AlarmState.UNACKNOWLEDGED, 2, 200.0, 2)
    same_time_later_id = urgency(AlarmState.UNACKNOWLEDGED, 2, 200.0, 3)
    assert same_time_later_id < newer < older


def test_an_unknown_state_is_never_ranked_out_of_sight() -> None:
    assert urgency_rank("something-new", 3) == urgency_rank(AlarmState.UNACKNOWLEDGED, 3)


@dataclass(frozen=True)
class _Alarm:
    id: int
    state: str
    priority: int
    raised_at: float


@given(st.lists(st.builds(_Alarm, st.integers(1, 50), states, st.integers(1, 5),
                          st.sampled_from([0.0, 1.0, 2.0, 3.5])), max_size=40))
def test_the_fast_sort_is_the_urgency_order(alarms: list[_Alarm]) -> None:
    # small ranges on purpose: many ties on priority and raise time, and repeated ids
    by_key = sorted(alarms, key=lambda a: urgency(a.state, a.priority, a.raised_at, a.id))
    assert by_urgency(alarms) == by_key
