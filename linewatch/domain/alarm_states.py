"""Alarm kinds and states (ISA-18.2 / IEC 62682 wording) and the one order of urgency, shared
by every layer: the lifecycle, the store, `alarms list`, the read model the faces draw and the
hook queue all rank alarms with `urgency_rank` / `urgency`.

Both are `StrEnum`s: a member is its string, so what the store, the audit trail, JSON lines
and hook payloads hold is byte for byte what plain strings gave.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from enum import StrEnum
from operator import attrgetter
from types import MappingProxyType
from typing import Protocol, TypeVar


class AlarmKind(StrEnum):
    """What an alarm is about, declared most urgent first (the order of DEFAULT_PRIORITIES)."""

    OUT_OF_SPEC = "out-of-spec"  # a measurement outside a specification limit
    BEYOND_LIMITS = "beyond-limits"  # a point beyond a control limit
    RUN_RULE = "run-rule"  # another run rule (a pattern within the limits)
    FEED_HEALTH = "feed-health"  # a feed gone stale, stuck or unreadable; monitoring stopped


MOST_URGENT = 1
"""Priority 1 is the most urgent; a larger number is less urgent (ISA-18.2 common practice)."""

DEFAULT_PRIORITIES: Mapping[str, int] = MappingProxyType({  # keyed by AlarmKind
    AlarmKind.OUT_OF_SPEC: 1,  # product is already outside the specification
    AlarmKind.BEYOND_LIMITS: 2,
    AlarmKind.RUN_RULE: 3,
    AlarmKind.FEED_HEALTH: 4,
})
"""Priority of each kind unless the config ranks it otherwise ([alarms.priorities])."""


class AlarmState(StrEnum):
    """The state shown for an alarm, derived from (condition present, acknowledged) and the
    shelving time."""

    UNACKNOWLEDGED = "unacknowledged"  # condition present, nobody has acknowledged it
    ACKNOWLEDGED = "acknowledged"  # condition present, acknowledged
    RETURNED_UNACKNOWLEDGED = "returned-unacknowledged"  # condition gone, not acknowledged
    SHELVED = "shelved"  # out of annunciation for a set time
    NORMAL = "normal"  # condition gone and acknowledged: the alarm is closed


OPEN_STATES = (
    AlarmState.UNACKNOWLEDGED,
    AlarmState.ACKNOWLEDGED,
    AlarmState.RETURNED_UNACKNOWLEDGED,
    AlarmState.SHELVED,
)

# How much a state asks of the operator: annunciated alarms first, shelved ones after them,
# closed ones last. An unknown state counts as annunciated, so it is never ranked out of sight.
_ATTENTION: Mapping[str, int] = MappingProxyType({
    AlarmState.UNACKNOWLEDGED: 0,
    AlarmState.ACKNOWLEDGED: 0,
    AlarmState.RETURNED_UNACKNOWLEDGED: 0,
    AlarmState.SHELVED: 1,
    AlarmState.NORMAL: 2,
})


def urgency_rank(state: str, priority: int) -> tuple[int, int]:
    """How urgent an alarm is, smaller first: annunciated before shelved before closed, then
    priority 1 before 2 before 3."""
    return (_ATTENTION.get(state, 0), priority)


def urgency(
    state: str, priority: int, raised_at: float, alarm_id: int
) -> tuple[int, int, float, int]:
    """Sort key of an alarm list: `urgency_rank`, then the newest first (by raise time, then
    by id), so the alarm that needs looking at now is at the top."""
    return (*urgency_rank(state, priority), -raised_at, -alarm_id)


class Ranked(Protocol):
    """What `by_urgency` sorts on: an alarm view (or anything with these attributes)."""

    @property
    def state(self) -> str: ...

    @property
    def priority(self) -> int: ...

    @property
    def raised_at(self) -> float: ...

    @property
    def id(self) -> int: ...


R = TypeVar("R", bound=Ranked)


def by_urgency(alarms: Iterable[R]) -> list[R]:
    """`alarms` in the order of `urgency`, by stable sorts from the last key to the first (one
    attribute each) and a split by attention: about a third of the time of one sort on a tuple
    key built per alarm, which a queue of tens of thousands of alarms notices (30,000 alarms:
    8 ms instead of 27 ms)."""
    order = sorted(alarms, key=attrgetter("id"), reverse=True)  # reverse=True stays stable
    order.sort(key=attrgetter("raised_at"), reverse=True)
    order.sort(key=attrgetter("priority"))
    groups: tuple[list[R], list[R], list[R]] = ([], [], [])
    for alarm in order:
        groups[_ATTENTION.get(alarm.state, 0)].append(alarm)
    return [*groups[0], *groups[1], *groups[2]]
