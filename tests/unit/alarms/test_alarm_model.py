"""The condition-based alarm model, point by point: episodes and clear_after, re-raise versus a
new row, escalation, out-of-spec counts, shelving, flood, feed health, the list's keys and the
audit actions' payloads.

The lifecycle follows the ISA-18.2 / IEC 62682 state model (common practice): an episode ends
only by returning to normal; an alarm returned but not acknowledged is the same alarm when its
condition comes back; only a closed alarm (acknowledged and returned) lets a new row open. The
episode rule is checked against `reference_episodes` below, written here from the definition
independently of `linewatch.engine.episodes`.
"""

from __future__ import annotations

import itertools
import json
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.alarms.book import LIST_KEYS, AlarmBook
from linewatch.config.loading import parse_config
from linewatch.domain.errors import LinewatchError
from linewatch.domain.records import FeedEvent
from linewatch.engine.episodes import episodes
from linewatch.present.view import (
    ACKNOWLEDGED,
    NORMAL,
    RETURNED_UNACKNOWLEDGED,
    SHELVED,
    UNACKNOWLEDGED,
)
from linewatch.store.actor import Actor
from linewatch.store.db import Store


def reference_episodes(
    firing_points: set[int], judged_until: int, clear_after: int
) -> list[tuple[int, int, int | None]]:
    """(first, last, returned_at) per episode, walking the points one by one: an active episode
    counts the quiet points after its last firing and returns at the clear_after-th."""
    out: list[tuple[int, int, int | None]] = []
    active = False
    first = last = quiet = 0
    for i in range(judged_until + 1):
        if i in firing_points:
            if not active:
                active, first = True, i
            last, quiet = i, 0
        elif active:
            quiet += 1
            if quiet == clear_after:
                out.append((first, last, i))
                active = False
    if active:
        out.append((first, last, None))
    return out


def trail(store: Store, action: str | None = None) -> list[tuple[str, str, dict[str, Any]]]:
    """(action, subject, payload) of every audit entry (of one action)."""
    return [(e.action, e.subject, json.loads(e.payload)) for e in store.audit.entries()
            if action is None or e.action == action]


def names(events: list[Any]) -> list[str]:
    return [e.action for e in events]


# -- episodes and clear_after ------------------------------------------------------------------

@st.composite
def firing_cases(draw: st.DrawFn) -> tuple[int, dict[str, list[int]], list[int], int, list[bool]]:
    """n judged points, per rule the points it fired at, where the judged ranges are cut, a
    clear_after, and at which cuts an operator acknowledges every open alarm."""
    n = draw(st.integers(1, 60))
    rules = draw(st.lists(st.sampled_from(["we1", "we2", "we3", "we4"]), min_size=1,
                          max_size=3, unique=True))
    density = draw(st.sampled_from([0.05, 0.2, 0.5]))
    fired = {r: [i for i in range(n) if draw(st.floats(0, 1)) < density] for r in rules}
    cuts = sorted(set(draw(st.lists(st.integers(1, max(1, n - 1)), max_size=8))))
    clear_after = draw(st.integers(1, 10))
    acks = draw(st.lists(st.booleans(), min_size=len(cuts) + 1, max_size=len(cuts) + 1))
    return n, fired, cuts, clear_after, acks


def feed_in_chunks(book: AlarmBook, fired: dict[str, list[int]], bounds: list[int],
                   clear_after: int, between: Callable[[int, int], None]) -> None:
    """Judge points bounds[k]..bounds[k+1]-1 chunk by chunk, as the collector does, calling
    `between(k, lo)` after each chunk (what an operator does between passes)."""
    for k, (lo, hi) in enumerate(itertools.pairwise(bounds)):
        chunk = {r: [i for i in f if lo <= i < hi] for r, f in fired.items()}
        book.observe_chart("od", "individuals", lo, hi - 1, chunk, now=float(lo),
                           clear_after=clear_after)
        between(k, lo)


def acknowledge_all(book: AlarmBook, at: float) -> None:
    ids = [a.id for a in book.alarms() if not a.acknowledged]
    if ids:
        book.acknowledge(ids, "tool wear", now=at, actor=Actor("op"))


def trail_episodes(store: Store) -> tuple[list[int], list[int]]:
    """First firings (raised, re-raised) and last firings (returned) of the trail's episodes."""
    starts = sorted([p["first_index"] for _, _, p in trail(store, "raised")]
                    + [p["index"] for _, _, p in trail(store, "re-raised")])
    return starts, [p["last_index"] for _, _, p in trail(store, "returned-to-normal")]


@settings(max_examples=60, deadline=None)
@given(case=firing_cases())
def test_live_alarms_give_the_episodes_of_the_definition_whatever_the_chunking(
    case: tuple[int, dict[str, list[int]], list[int], int, list[bool]],
) -> None:
    n, fired, cuts, clear_after, acks = case
    points = {i for f in fired.values() for i in f}
    want = episodes([i for f in fired.values() for i in f], n - 1, clear_after)
    # the vectorised definition agrees with the walk written here
    assert [(e.first, e.last, e.returned_at) for e in want] == reference_episodes(
        points, n - 1, clear_after)
    bounds = [0, *(c for c in cuts if c < n), n]
    with tempfile.TemporaryDirectory() as tmp, Store(Path(tmp) / "s") as store:
        book = AlarmBook(store)

        def between(k: int, lo: int) -> None:
            if acks[k]:
                acknowledge_all(book, lo + 0.5)

        feed_in_chunks(book, fired, bounds, clear_after, between)
        starts, returns = trail_episodes(store)
        assert starts == [e.first for e in want]
        assert returns == [e.last for e in want if e.returned_at is not None]
        rows = book.alarms(include_closed=True)
        assert sum(a.episodes for a in rows) == len(want)
        assert sum(a.signals for a in rows) == len(points)
        for rule, f in fired.items():
            assert sum(a.rule_counts.get(rule, 0) for a in rows) == len(f)
        # a new row opens only after the previous one closed; every other episode re-raises
        entries = [(a, s) for a, s, _ in trail(store) if a in ("raised", "closed")]
        for (a, _), (b, _) in itertools.pairwise(entries):
            assert (a, b) != ("raised", "raised")
        assert all(not a.active for a in rows[:-1])
        if rows:
            assert rows[-1].active == (want[-1].returned_at is None)
        assert store.audit.verify().ok


@pytest.mark.parametrize("clear_after", [1, 2, 8])
def test_fewer_than_clear_after_quiet_points_continue_an_episode(
    book: AlarmBook, clear_after: int
) -> None:
    """Firing at 0 and at clear_after (clear_after - 1 quiet points between) is one episode;
    firing at 0 and at clear_after + 1 (clear_after quiet points between) is two."""
    book.observe_chart("od", "individuals", 0, clear_after, {"we2": [0, clear_after]}, now=1,
                       clear_after=clear_after)
    book.observe_chart("wall", "individuals", 0, clear_after + 1, {"we2": [0, clear_after + 1]},
                       now=1, clear_after=clear_after)
    od, wall = book.alarms()
    assert (od.episodes, od.active) == (1, True)
    assert (wall.episodes, wall.active) == (2, True)
    assert trail(book.store, "returned-to-normal")[0][2]["last_index"] == 0


def test_clear_after_1_returns_at_the_first_quiet_point(book: AlarmBook) -> None:
    events = book.observe_chart("od", "xbar", 0, 2, {"we1": [0, 1]}, now=1, clear_after=1)
    assert names(events) == ["raised", "returned-to-normal"]
    [alarm] = book.alarms()
    assert (alarm.first_index, alarm.last_index, alarm.returned_at) == (0, 1, 1)
    assert alarm.state(2) == RETURNED_UNACKNOWLEDGED


def test_the_default_clear_after_is_8_plotted_points(book: AlarmBook) -> None:
    """The default: the episode returns at the 8th quiet point, not before."""
    book.observe_chart("od", "individuals", 0, 7, {"we1": [0]}, now=1)
    assert book.alarms()[0].active
    assert names(book.observe_chart("od", "individuals", 8, 8, {}, now=2)) == [
        "returned-to-normal"]


def test_clear_after_comes_from_the_config_and_is_at_least_1() -> None:
    config = parse_config('[[characteristic]]\nname = "od"\nclear_after = 3\n', "c.toml")
    assert config.characteristic("od").clear_after == 3  # type: ignore[union-attr]
    from linewatch.domain.errors import ConfigError
    with pytest.raises(ConfigError, match="clear_after"):
        parse_config('[[characteristic]]\nname = "od"\nclear_after = 0\n', "c.toml")


# -- re-raise versus a new row -----------------------------------------------------------------

def test_a_returned_unacknowledged_alarm_is_re_raised_not_duplicated(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 10, {"we2": [0, 1]}, now=1, clear_after=2)
    events = book.observe_chart("od", "individuals", 11, 16, {"we4": [15]}, now=2,
                                clear_after=2)
    assert names(events) == ["re-raised"]
    [alarm] = book.alarms(include_closed=True)
    assert (alarm.id, alarm.episodes, alarm.signals, alarm.rule) == (1, 2, 3, "we2")
    assert (alarm.first_index, alarm.episode_first, alarm.last_index) == (0, 15, 15)
    assert alarm.rule_counts == {"we2": 2, "we4": 1}
    assert alarm.state(3) == UNACKNOWLEDGED
    [(_, subject, payload)] = trail(book.store, "re-raised")
    assert subject == "alarm 1"
    assert {k: payload[k] for k in ("chart", "rule", "index")} == {
        "chart": "individuals", "rule": "we4", "index": 15}


def test_acknowledged_while_active_stays_acknowledged_within_its_episode(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    book.acknowledge([1], "tool wear", now=2, actor=operator)
    assert book.observe_chart("od", "individuals", 1, 5, {"we1": [3]}, now=3) == []
    [alarm] = book.alarms()
    assert alarm.state(4) == ACKNOWLEDGED and alarm.signals == 2


def test_a_closed_alarm_lets_the_next_episode_open_a_new_row(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1, clear_after=3)
    book.acknowledge([1], "tool wear", now=2, actor=operator)
    assert names(book.observe_chart("od", "individuals", 1, 3, {}, now=3, clear_after=3)) == [
        "returned-to-normal", "closed"]
    events = book.observe_chart("od", "individuals", 4, 4, {"we1": [4]}, now=4, clear_after=3)
    assert names(events) == ["raised"]
    first, second = book.alarms(include_closed=True)
    assert (first.state(5), first.episodes) == (NORMAL, 1)
    assert (second.id, second.first_index, second.episodes, second.state(5)) == (
        2, 4, 1, UNACKNOWLEDGED)
    # acknowledging a returned alarm closes it too, and again the next episode is a new row
    book.observe_chart("od", "individuals", 5, 7, {}, now=5, clear_after=3)
    assert names(book.acknowledge([2], "tool wear", now=6, actor=operator)) == [
        "acknowledged", "closed"]
    book.observe_chart("od", "individuals", 8, 8, {"we4": [8]}, now=7, clear_after=3)
    assert [a.id for a in book.alarms()] == [3]


def test_charts_and_characteristics_are_separate_conditions(book: AlarmBook) -> None:
    for chart in ("individuals", "moving-range", "xbar", "range", "stdev"):
        book.observe_chart("od", chart, 0, 0, {"we1": [0]}, now=1)
    book.observe_chart("wall", "individuals", 0, 0, {"we1": [0]}, now=1)
    assert len(book.alarms()) == 6


# -- escalation --------------------------------------------------------------------------------

def test_a_run_rule_alarm_that_breaks_a_limit_is_escalated(book: AlarmBook) -> None:
    book.observe_chart("od", "individuals", 0, 2, {"we2": [1, 2]}, now=10)
    [alarm] = book.alarms()
    assert (alarm.kind, alarm.priority, alarm.escalated_at) == ("run-rule", 3, None)
    events = book.observe_chart("od", "individuals", 3, 4, {"we1": [4], "we2": [3, 4]}, now=20)
    assert names(events) == ["escalated"]
    [alarm] = book.alarms()
    # default priorities: beyond-limits 2, run rules 3 (lower = more urgent)
    assert (alarm.kind, alarm.priority, alarm.escalated_at, alarm.rule) == (
        "beyond-limits", 2, 20, "we2")  # the first-out rule stays the first-out rule
    assert events[0].alarm is not None and events[0].alarm.priority == 2
    [(_, subject, payload)] = trail(book.store, "escalated")
    assert subject == "alarm 1"
    assert payload == {"characteristic": "od", "chart": "individuals", "kind": "beyond-limits",
                       "priority": 2, "from_priority": 3, "rule": "we1", "index": 4}
    assert book.list_record(alarm, now=30)["escalated_at"] is not None
    # a beyond-limits alarm has nothing to escalate to
    assert book.observe_chart("od", "individuals", 5, 6, {"we1": [6]}, now=30) == []


def test_escalation_follows_the_configured_priorities(store: Store) -> None:
    config = parse_config('[alarms.priorities]\nbeyond-limits = 1\nrun-rule = 2\n', "p.toml")
    book = AlarmBook(store, config)
    book.observe_chart("od", "individuals", 0, 0, {"we3": [0]}, now=1)
    book.observe_chart("od", "individuals", 1, 1, {"we1": [1]}, now=2)
    [alarm] = book.alarms()
    assert (alarm.kind, alarm.priority) == ("beyond-limits", 1)


def test_escalated_while_shelved_is_audited_but_rings_nothing(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we2": [0]}, now=1)
    book.shelve(1, 600, "die change", now=2, actor=operator)
    assert book.observe_chart("od", "individuals", 1, 1, {"we1": [1]}, now=3) == []
    assert book.alarms()[0].priority == 2
    [(_, _, payload)] = trail(book.store, "escalated")
    assert payload["index"] == 1


# -- out of spec -------------------------------------------------------------------------------

def test_out_of_spec_counts_parts_over_every_episode(book: AlarmBook) -> None:
    """Parts to quarantine: every nonconforming measurement, counted per side, over episodes."""
    values = [10.0, 10.6, 9.4, 10.0, 10.0, 10.0, 10.7, 10.5, 9.5, 10.0, 10.0, 10.0]
    # USL 10.5, LSL 9.5: equal to a limit conforms (common practice). clear_after 3.
    events = book.observe_spec("od", 0, values, lsl=9.5, usl=10.5, now=1, clear_after=3)
    assert names(events) == ["raised", "returned-to-normal", "re-raised", "returned-to-normal"]
    [alarm] = book.alarms()
    assert (alarm.below_lsl, alarm.above_usl, alarm.signals, alarm.episodes) == (1, 2, 3, 2)
    assert alarm.rule_counts == {"lsl": 1, "usl": 2}
    assert book.list_record(alarm)["below_lsl"] == 1
    assert book.list_record(alarm)["above_usl"] == 2


def test_a_one_sided_spec_counts_one_side(book: AlarmBook) -> None:
    book.observe_spec("od", 0, [1.0, -5.0, 9.0], lsl=None, usl=2.0, now=1)
    [alarm] = book.alarms()
    assert (alarm.below_lsl, alarm.above_usl, alarm.first_index) == (0, 1, 2)


# -- shelving ----------------------------------------------------------------------------------

def test_shelving_is_bounded_by_the_configured_maximum(store: Store, operator: Actor) -> None:
    book = AlarmBook(store)
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    with pytest.raises(LinewatchError, match=r"at most 12h"):  # the default: 12 h
        book.shelve(1, 12 * 3600 + 1, "long", now=2, actor=operator)
    book.shelve(1, 12 * 3600, "whole shift", now=2, actor=operator)
    limited = AlarmBook(store, parse_config('[alarms]\nshelve_max = "30m"\n', "s.toml"))
    with pytest.raises(LinewatchError, match=r"alarms\.shelve_max"):
        limited.shelve_characteristic("od", 31 * 60, "trial", now=3, actor=operator)


def test_while_shelved_episodes_are_counted_and_audited_but_raise_nothing(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 1, {"we2": [0]}, now=1, clear_after=1)
    book.shelve(1, 600, "die change", now=2, actor=operator)
    events = book.observe_chart("od", "individuals", 2, 8, {"we2": [3, 6]}, now=3,
                                clear_after=1)
    assert "re-raised" not in names(events) and "raised" not in names(events)
    [alarm] = book.alarms()
    assert (alarm.episodes, alarm.signals, alarm.state(4)) == (3, 3, SHELVED)
    reraised = trail(book.store, "re-raised")
    assert [p["index"] for _, _, p in reraised] == [3, 6]
    assert all(p["shelved"] is True for _, _, p in reraised)


def test_a_shelved_alarm_never_closes_and_closes_when_the_shelf_ends(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1, clear_after=1)
    book.shelve(1, 600, "die change", now=2, actor=operator)
    book.acknowledge([1], "tool wear", now=3, actor=operator)
    events = book.observe_chart("od", "individuals", 1, 1, {}, now=4, clear_after=1)
    assert names(events) == ["returned-to-normal"]  # acknowledged and returned, yet open
    assert book.alarms()[0].state(5) == SHELVED
    events = book.unshelve(1, now=6, actor=operator)
    assert names(events) == ["unshelved", "closed"]
    assert book.alarms() == []
    [(_, _, payload)] = trail(book.store, "unshelved")
    assert (payload["episodes"], payload["signals"], payload["expired"]) == (1, 1, False)


def test_a_shelf_that_expires_brings_the_alarm_back_with_what_happened(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1, clear_after=1)
    book.shelve(1, 60, "die change", now=2, actor=operator)
    book.observe_chart("od", "individuals", 1, 5, {"we1": [2, 4]}, now=10, clear_after=1)
    assert names(book.tick(now=63)) == ["unshelved"]
    [alarm] = book.alarms()
    assert (alarm.state(63), alarm.episodes, alarm.signals) == (RETURNED_UNACKNOWLEDGED, 3, 3)


def test_a_shelved_characteristic_opens_new_alarms_shelved_until_its_time_is_over(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    assert book.shelve_characteristic("od", 100, "die change", now=2, actor=operator) == 1
    events = book.observe_chart("od", "moving-range", 0, 0, {"we1": [0]}, now=3)
    assert events == []  # born shelved: no bell, no hook
    raised = trail(book.store, "raised")
    assert raised[-1][2]["shelved"] is True
    assert [a.state(4) for a in book.alarms()] == [SHELVED, SHELVED]
    book.observe_chart("wall", "individuals", 0, 0, {"we1": [0]}, now=3)  # not shelved
    assert book.alarms()[-1].state(4) == UNACKNOWLEDGED
    # after the time is over, new alarms of od annunciate again
    events = book.observe_chart("od", "xbar", 0, 0, {"we1": [0]}, now=200)
    assert "raised" in names(events)
    unshelved = trail(book.store, "unshelved")
    assert {s for _, s, _ in unshelved} == {"od", "alarm 1", "alarm 2"}


# -- flood -------------------------------------------------------------------------------------

def raise_on_charts(book: AlarmBook, count: int, now: float, first: int = 0) -> None:
    """New alarms on characteristics c<first>.., one a second from `now`."""
    for k in range(count):
        book.observe_chart(f"c{first + k}", "individuals", 0, 0, {"we1": [0]}, now=now + k)


def test_more_than_10_alarms_in_10_minutes_is_a_flood_by_default(book: AlarmBook) -> None:
    """The defaults (after ISA-18.2's guidance): more than 10 in 10 minutes."""
    raise_on_charts(book, 10, now=1000)
    assert book.check_flood(now=1010) == [] and book.flood() is None
    raise_on_charts(book, 1, now=1011, first=10)
    assert names(book.check_flood(now=1012)) == ["flood-started"]
    assert book.flood() is not None and book.flood().count == 11  # type: ignore[union-attr]
    assert book.check_flood(now=1013) == []  # said once, not per alarm
    # 600 s after the first ten they no longer count: 1 in the window
    assert names(book.check_flood(now=1610)) == ["flood-ended"]


def test_a_flood_starts_and_ends_with_audit_entries(store: Store, operator: Actor) -> None:
    config = parse_config('[alarms]\nflood_alarms = 2\nflood_window = "1m"\n', "f.toml")
    book = AlarmBook(store, config)
    raise_on_charts(book, 2, now=100)
    assert book.check_flood(now=102) == []
    book.observe_chart("c0", "individuals", 1, 1, {}, now=103, clear_after=1)
    book.observe_chart("c0", "individuals", 2, 2, {"we2": [2]}, now=104)  # a re-raise counts
    events = book.check_flood(now=105)
    assert [(e.action, e.alarm) for e in events] == [("flood-started", None)]
    flood = book.flood()
    assert flood is not None and (flood.since, flood.count, flood.peak) == (105, 3, 3)
    raise_on_charts(book, 1, now=106, first=2)
    book.check_flood(now=107)
    assert book.flood().peak == 4  # type: ignore[union-attr]
    # annunciated at 100, 101, 104 (re-raised) and 106; a minute later they drop out one by one
    assert names(book.check_flood(now=161)) == []  # 101, 104, 106: still more than 2
    assert book.flood().count == 3  # type: ignore[union-attr]
    assert names(book.check_flood(now=162)) == ["flood-ended"]  # 104 and 106: 2, not more
    assert book.flood() is None
    [(_, _, started)] = trail(store, "flood-started")
    assert started == {"count": 3, "window": 60, "limit": 2}
    [(_, _, ended)] = trail(store, "flood-ended")
    assert ended == {"since": 105, "peak": 4}


def test_shelved_alarms_make_no_flood(store: Store, operator: Actor) -> None:
    config = parse_config('[alarms]\nflood_alarms = 1\n', "f.toml")
    book = AlarmBook(store, config)
    book.shelve_characteristic("c0", 3600, "trial", now=1, actor=operator)
    book.shelve_characteristic("c1", 3600, "trial", now=1, actor=operator)
    raise_on_charts(book, 2, now=2)
    assert book.check_flood(now=5) == []


# -- feed health -------------------------------------------------------------------------------

def test_a_feed_condition_that_comes_back_re_raises_its_alarm(
    book: AlarmBook, operator: Actor
) -> None:
    stale, resumed = FeedEvent("stale", "/logs/od.csv"), FeedEvent("resumed", "/logs/od.csv")
    assert names(book.observe_feed(stale, now=1)) == ["raised"]
    assert names(book.observe_feed(resumed, now=2)) == ["returned-to-normal"]
    assert names(book.observe_feed(stale, now=3)) == ["re-raised"]
    [alarm] = book.alarms()
    assert (alarm.episodes, alarm.signals, alarm.state(4)) == (2, 2, UNACKNOWLEDGED)
    book.acknowledge([alarm.id], "1", now=4, actor=operator)
    assert names(book.observe_feed(resumed, now=5)) == ["returned-to-normal", "closed"]
    assert names(book.observe_feed(stale, now=6)) == ["raised"]
    assert [a.id for a in book.alarms()] == [2]


def test_monitoring_stopped_is_one_priority_1_alarm_that_returns(book: AlarmBook) -> None:
    assert names(book.monitoring_failed("disk full", now=1)) == ["raised"]
    assert book.monitoring_failed("disk full", now=2) == []
    [alarm] = book.alarms()
    assert (alarm.priority, alarm.kind, alarm.characteristic) == (1, "feed-health", "linewatch")
    assert "monitoring stopped: disk full" in alarm.detail
    assert names(book.monitoring_resumed(now=3)) == ["returned-to-normal"]


# -- what faces show ---------------------------------------------------------------------------

def test_list_keys_are_the_old_ones_then_the_issue_s_additions(book: AlarmBook) -> None:
    old = ("id", "kind", "characteristic", "chart", "rule", "first_index", "last_index",
           "raised_at", "state", "priority", "acknowledged_by", "acknowledged_at", "reason",
           "note", "shelved_until")
    added = ("signals", "episodes", "rules", "below_lsl", "above_usl", "escalated_at")
    assert old + added == LIST_KEYS
    book.observe_chart("od", "xbar", 0, 3, {"we2": [1, 2], "we3": [2]}, now=1)
    record = book.list_record(book.alarms()[0], now=2)
    assert tuple(record) == LIST_KEYS
    assert (record["signals"], record["episodes"], record["rules"]) == (
        2, 1, {"we2": 2, "we3": 1})
    assert isinstance(record["rules"], dict)
    assert (record["below_lsl"], record["above_usl"], record["escalated_at"]) == (
        None, None, None)


def test_audit_payloads_of_the_alarm_actions(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "xbar", 0, 0, {"we4": [0]}, now=1, clear_after=1)
    book.observe_chart("od", "xbar", 1, 1, {"we1": [1]}, now=2, clear_after=1)
    book.observe_chart("od", "xbar", 2, 2, {}, now=3, clear_after=1)
    book.observe_chart("od", "xbar", 3, 3, {"we2": [3]}, now=4, clear_after=1)
    book.shelve(1, 60, "die change", now=5, actor=operator)
    book.unshelve(1, now=6, actor=operator)
    book.acknowledge([1], "tool wear", "new insert", now=7, actor=operator)
    book.observe_chart("od", "xbar", 4, 4, {}, now=8, clear_after=1)
    by_action = {a: (s, p) for a, s, p in trail(book.store)}
    subject, raised = by_action["raised"]
    assert subject == "alarm 1"
    assert {k: raised[k] for k in ("characteristic", "chart", "kind", "priority", "rule",
                                   "first_index")} == {
        "characteristic": "od", "chart": "xbar", "kind": "run-rule", "priority": 3,
        "rule": "we4", "first_index": 0}
    reraised = by_action["re-raised"][1]
    assert {k: reraised[k] for k in ("chart", "rule", "index")} == {
        "chart": "xbar", "rule": "we2", "index": 3}
    assert [p["last_index"] for _, _, p in trail(book.store, "returned-to-normal")] == [1, 3]
    assert by_action["escalated"][1]["kind"] == "beyond-limits"
    ack = by_action["acknowledged"][1]
    assert (ack["reason"], ack["note"], ack["from"]) == ("tool wear", "new insert", "10.1.2.3")
    assert by_action["shelved"][1]["reason"] == "die change"
    assert by_action["shelved"][1]["seconds"] == 60
    assert by_action["unshelved"][1]["expired"] is False
    assert by_action["closed"][0] == "alarm 1"
    assert [a for a, _, _ in trail(book.store)] == [
        "raised", "escalated", "returned-to-normal", "re-raised", "shelved", "unshelved",
        "acknowledged", "returned-to-normal", "closed"]
    assert book.store.audit.verify().ok


def test_the_priority_is_the_most_urgent_of_the_rules_seen_whatever_the_config(
    store: Store,
) -> None:
    """With run rules configured more urgent than a limit break, a beyond-limits alarm that
    then sees a run rule takes the run rule's priority (and is escalated): the priority is
    the most urgent of the rules seen."""
    config = parse_config('[alarms.priorities]\nbeyond-limits = 3\nrun-rule = 2\n', "p.toml")
    book = AlarmBook(store, config)
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    assert [(a.kind, a.priority) for a in book.alarms()] == [("beyond-limits", 3)]
    events = book.observe_chart("od", "individuals", 1, 1, {"we2": [1]}, now=2)
    assert names(events) == ["escalated"]
    [alarm] = book.alarms()
    assert (alarm.kind, alarm.priority, alarm.escalated_at) == ("run-rule", 2, 2)
    # both at the first point: the alarm opens at the more urgent priority, not escalated
    events = book.observe_chart("wall", "individuals", 0, 0, {"we1": [0], "we2": [0]}, now=3)
    assert names(events) == ["raised"]
    wall = book.alarms()[-1]
    assert (wall.kind, wall.priority, wall.escalated_at) == ("run-rule", 2, None)


@settings(max_examples=60, deadline=None)
@given(case=firing_cases(), shelving=st.lists(st.sampled_from(["ack", "shelve", "none"]),
                                              min_size=9, max_size=9),
       shelf_for=st.integers(1, 30))
def test_shelving_and_acknowledging_change_no_episode(
    case: tuple[int, dict[str, list[int]], list[int], int, list[bool]], shelving: list[str],
    shelf_for: int,
) -> None:
    """Whatever an operator does between passes (acknowledge, shelve the characteristic for a
    while, which ends by itself), the trail holds every episode once; a shelved alarm never
    closes, and a new row still opens only after the previous one closed."""
    n, fired, cuts, clear_after, _ = case
    want = episodes([i for f in fired.values() for i in f], n - 1, clear_after)
    bounds = [0, *(c for c in cuts if c < n), n]
    with tempfile.TemporaryDirectory() as tmp, Store(Path(tmp) / "s") as store:
        book = AlarmBook(store)

        def between(k: int, lo: int) -> None:
            if shelving[k] == "ack":
                acknowledge_all(book, lo + 0.5)
            elif shelving[k] == "shelve":
                book.shelve_characteristic("od", shelf_for, "trial", now=lo + 0.5,
                                           actor=Actor("op"))

        feed_in_chunks(book, fired, bounds, clear_after, between)
        starts, returns = trail_episodes(store)
        assert starts == [e.first for e in want]
        assert returns == [e.last for e in want if e.returned_at is not None]
        entries = [a for a, _, _ in trail(store) if a in ("raised", "closed")]
        assert ("raised", "raised") not in set(itertools.pairwise(entries))
        for entry in store.audit.entries():
            if entry.action == "closed":
                alarm_id = int(entry.subject.split()[1])
                alarm = store.alarms.get(alarm_id)
                assert alarm is not None
                assert alarm.shelved_until is None or alarm.shelved_until <= entry.at
        assert sum(a.episodes for a in book.alarms(include_closed=True)) == len(want)
        assert store.audit.verify().ok


@pytest.mark.parametrize("chunk", [1, 3, 25])
def test_a_new_baseline_while_rows_arrive_never_stops_the_alarm_book(
    tmp_path: Path, chunk: int
) -> None:
    """The stall once met by a user: a new baseline requested while rows arrive, with a point of
    the new baseline window beyond the new limits. Fed as the collector feeds it (push, then
    each chart's judged range and firings; `settle` right after the request), every firing lies
    in its judged range, the book never raises, and the alarm counts every firing point once."""
    from linewatch.engine.live import CharacteristicEngine
    from linewatch.engine.rulebook import parse_rule_list, resolve_rules
    from linewatch.engine.setup import ChartSetup

    rng = np.random.default_rng(9)
    values = rng.normal(10.0, 0.1, 200)
    values[100:] += 0.5  # the process moved: the new phase is centred higher
    values[104] = 13.0  # inside the new baseline window (100..119), far beyond any limits
    setup = ChartSetup("od", 1, "range", tuple(resolve_rules(parse_rule_list("nelson"))), 20)
    engine = CharacteristicEngine(setup)
    firing_points: dict[str, set[int]] = {}
    with Store(tmp_path / "state") as store:
        book = AlarmBook(store)

        def judge(out: Any, now: float) -> None:
            fired: dict[str, dict[str, list[int]]] = {}
            for f in out.firings:
                lo, hi = out.judged[f.chart]
                assert lo <= f.index <= hi, (f, out.judged)
                fired.setdefault(f.chart, {}).setdefault(f.rule, []).append(f.index)
                firing_points.setdefault(f.chart, set()).add(f.index)
            for chart, (lo, hi) in out.judged.items():
                book.observe_chart("od", chart, lo, hi, fired.get(chart, {}), now=now)

        for start in range(0, 200, chunk):
            if start <= 110 < start + chunk:  # the request comes while rows keep arriving
                engine.new_baseline(100)
                judge(engine.settle(), now=float(start))
            judge(engine.push(values[start:start + chunk]), now=float(start))
        assert engine.phase == 1
        assert 104 in firing_points["individuals"]
        rows = book.alarms(include_closed=True)
        for chart, points in firing_points.items():
            assert sum(a.signals for a in rows if a.chart == chart) == len(points)
