"""Alarm performance of a period, computed from the audit trail alone: how many alarms the
operator was shown, how they bunched up, which alarms chattered, which were still open at the
end and how quickly people acknowledged. Pure functions over audit entries (no store, no UI), so
the shift report in every format prints the same figures.

An *annunciation* is a `raised` or `re-raised` entry that was not shelved: what reached the
operator (the same count the live flood check uses). Guidance figures of ISA-18.2 / IEC 62682
(quoted from memory): about 1 alarm per 10 minutes per operator is very likely acceptable, about
2 is the most that is manageable, and more than about 10 in 10 minutes is a flood.
"""

from __future__ import annotations

import json
import math
import statistics
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Protocol

TEN_MINUTES = 600.0
# ISA-18.2 guidance, quoted from memory: alarms per 10 minutes for one operator.
GUIDE_ACCEPTABLE = 1.0  # very likely acceptable
GUIDE_MANAGEABLE = 2.0  # the most that is manageable
CHATTER_TIMES = 3  # re-raised this many times ...
CHATTER_WITHIN = 60.0  # ... within this many seconds: chattering (common practice)

RAISED, RE_RAISED, RETURNED = "raised", "re-raised", "returned-to-normal"
ACKNOWLEDGED, CLOSED = "acknowledged", "closed"
_MARK_ACTIONS = (RAISED, RE_RAISED, RETURNED, ACKNOWLEDGED, CLOSED)


class _Entry(Protocol):
    """What this module reads of an audit entry (`store.audit.AuditEntry` has it)."""

    @property
    def at(self) -> float: ...
    @property
    def actor(self) -> str: ...
    @property
    def action(self) -> str: ...
    @property
    def subject(self) -> str: ...
    @property
    def payload(self) -> str: ...


@dataclass(frozen=True, slots=True)
class AlarmMark:
    """One transition of one alarm, read from the audit trail. `index`: the first firing for
    raised / re-raised, the last firing for returned-to-normal (None for feed health)."""

    at: float
    alarm_id: int
    action: str
    index: int | None = None
    shelved: bool = False
    actor: str = ""

    @property
    def annunciated(self) -> bool:
        """Shown to the operator: raised or re-raised while not shelved."""
        return self.action in (RAISED, RE_RAISED) and not self.shelved


def marks_from_audit(entries: Iterable[_Entry]) -> list[AlarmMark]:
    """The alarm transitions among `entries` (subject "alarm N"), oldest first; other entries
    (limits, config, floods, characteristic shelves) are left out."""
    marks: list[AlarmMark] = []
    for e in entries:
        if e.action not in _MARK_ACTIONS or not e.subject.startswith("alarm "):
            continue
        try:
            alarm_id = int(e.subject[6:])
            payload = json.loads(e.payload or "{}")
        except ValueError:
            continue
        if not isinstance(payload, dict):
            payload = {}
        key = {RAISED: "first_index", RE_RAISED: "index", RETURNED: "last_index"}.get(e.action)
        raw = payload.get(key) if key else None
        index = raw if isinstance(raw, int) and not isinstance(raw, bool) else None
        marks.append(AlarmMark(e.at, alarm_id, e.action, index,
                               payload.get("shelved") is True, e.actor))
    marks.sort(key=lambda m: m.at)  # stable: chain order within one moment
    return marks


@dataclass(frozen=True, slots=True)
class Episode:
    """One episode of one alarm: from its raise (or re-raise) to its return to normal."""

    alarm_id: int
    started_at: float
    first_index: int | None
    returned_at: float | None = None  # None: not returned (by the end of the marks given)
    last_index: int | None = None
    shelved: bool = False


def episodes(marks: Iterable[AlarmMark]) -> list[Episode]:
    """Pair each raise / re-raise with the next return to normal of the same alarm; ordered by
    start. A return without a start among the marks (it began earlier) is left out."""
    started: dict[int, AlarmMark] = {}
    done: list[Episode] = []
    for m in sorted(marks, key=lambda m: m.at):
        if m.action in (RAISED, RE_RAISED):
            begun = started.pop(m.alarm_id, None)
            if begun is not None:  # a start without a return in between: keep it, open
                done.append(Episode(m.alarm_id, begun.at, begun.index, shelved=begun.shelved))
            started[m.alarm_id] = m
        elif m.action == RETURNED and m.alarm_id in started:
            begun = started.pop(m.alarm_id)
            done.append(Episode(m.alarm_id, begun.at, begun.index, m.at, m.index, begun.shelved))
    done += [Episode(b.alarm_id, b.at, b.index, shelved=b.shelved) for b in started.values()]
    return sorted(done, key=lambda ep: (ep.started_at, ep.alarm_id))


def window_counts(times: Iterable[float], since: float, end: float, window: float) -> list[int]:
    """Counts of `times` in consecutive windows [since + k·window, since + (k+1)·window) up to
    `end`; the last window may be shorter. Times outside [since, end) are left out."""
    if end <= since or window <= 0:
        return []
    counts = [0] * math.ceil((end - since) / window)
    for t in times:
        if since <= t < end:
            counts[min(int((t - since) // window), len(counts) - 1)] += 1
    return counts


@dataclass(frozen=True, slots=True)
class Chatter:
    """An alarm that came back again and again: re-raised `most_in_window` times within
    CHATTER_WITHIN seconds at its worst, `re_raised` times in the whole period."""

    alarm_id: int
    re_raised: int
    most_in_window: int


@dataclass(frozen=True, slots=True)
class OpenAtEnd:
    """An alarm not closed at the end of the period, `age` seconds after it was first raised."""

    alarm_id: int
    raised_at: float
    age: float
    acknowledged: bool  # acknowledged since its latest raise / re-raise


@dataclass(frozen=True, slots=True)
class AlarmPerformance:
    """The alarm-performance figures of [since, end)."""

    since: float
    end: float
    annunciations: int
    per_ten_minutes: float  # mean rate over the period
    peak_ten_minutes: int  # most annunciations in one 10-minute window (from the start)
    flood_alarms: int
    flood_window: float
    windows: int  # flood windows in the period (the last may be shorter)
    flood_windows: int  # of them, with more than flood_alarms annunciations
    most_frequent: list[tuple[int, int]] = field(default_factory=list)  # (alarm id, count)
    chattering: list[Chatter] = field(default_factory=list)
    open_at_end: list[OpenAtEnd] = field(default_factory=list)
    acknowledge_times: list[float] = field(default_factory=list)  # seconds, one per ack
    floods: list[FloodSpan] = field(default_factory=list)  # as the collector announced them

    @property
    def flood_share(self) -> float | None:
        """Share of flood windows that were in flood (None without a window)."""
        return self.flood_windows / self.windows if self.windows else None

    @property
    def median_to_acknowledge(self) -> float | None:
        """Median seconds from annunciation to acknowledgement (None without one)."""
        return statistics.median(self.acknowledge_times) if self.acknowledge_times else None

    @property
    def longest_to_acknowledge(self) -> float | None:
        """Longest seconds from annunciation to acknowledgement (None without one)."""
        return max(self.acknowledge_times) if self.acknowledge_times else None


def annunciation_times(marks: Iterable[AlarmMark], since: float, end: float) -> list[float]:
    """When alarms were shown to the operator in [since, end), in order."""
    return sorted(m.at for m in marks if m.annunciated and since <= m.at < end)


def most_frequent(
    marks: Iterable[AlarmMark], since: float, end: float, top: int = 5, at_least: int = 2
) -> list[tuple[int, int]]:
    """The `top` alarms by annunciations in [since, end), shown at least `at_least` times (an
    alarm shown once is no burden to name): (alarm id, count), most first, then the lower id."""
    counts: dict[int, int] = {}
    for m in marks:
        if m.annunciated and since <= m.at < end:
            counts[m.alarm_id] = counts.get(m.alarm_id, 0) + 1
    often = [kv for kv in counts.items() if kv[1] >= at_least]
    return sorted(often, key=lambda kv: (-kv[1], kv[0]))[:top]


def chattering(
    marks: Iterable[AlarmMark], since: float, end: float, times: int = CHATTER_TIMES,
    within: float = CHATTER_WITHIN,
) -> list[Chatter]:
    """Alarms re-raised `times` or more times within `within` seconds (both ends included) in
    [since, end), shelved or not (chattering is the condition's behaviour, shown or not)."""
    by_alarm: dict[int, list[float]] = {}
    for m in marks:
        if m.action == RE_RAISED and since <= m.at < end:
            by_alarm.setdefault(m.alarm_id, []).append(m.at)
    found: list[Chatter] = []
    for alarm_id, ats in sorted(by_alarm.items()):
        ats.sort()
        most, lo = 0, 0
        for hi, t in enumerate(ats):  # the widest run of re-raises inside one `within`
            while t - ats[lo] > within:
                lo += 1
            most = max(most, hi - lo + 1)
        if most >= times:
            found.append(Chatter(alarm_id, len(ats), most))
    return sorted(found, key=lambda c: (-c.most_in_window, -c.re_raised, c.alarm_id))


def open_at_end(marks: Iterable[AlarmMark], end: float) -> list[OpenAtEnd]:
    """Alarms raised before `end` and not closed before it, oldest first. Needs the marks from
    each alarm's raise on (an alarm whose raise is missing is not known to be open)."""
    raised: dict[int, float] = {}
    acked: dict[int, bool] = {}
    for m in sorted(marks, key=lambda m: m.at):
        if m.at >= end:
            break
        if m.action == RAISED:
            raised[m.alarm_id], acked[m.alarm_id] = m.at, False
        elif m.alarm_id not in raised:
            continue
        elif m.action == RE_RAISED:
            acked[m.alarm_id] = False
        elif m.action == ACKNOWLEDGED:
            acked[m.alarm_id] = True
        elif m.action == CLOSED:
            del raised[m.alarm_id]
    return [OpenAtEnd(i, at, end - at, acked[i])
            for i, at in sorted(raised.items(), key=lambda kv: (kv[1], kv[0]))]


def acknowledge_times(marks: Iterable[AlarmMark], since: float, end: float) -> list[float]:
    """For each acknowledgement in [since, end): seconds since the alarm was first shown
    unacknowledged (its raise, or the first re-raise after an earlier acknowledgement; later
    re-raises of an alarm still waiting do not restart the clock). An acknowledgement of an
    alarm never shown among the marks (raised before them, or only while shelved) is left out."""
    waiting: dict[int, float] = {}
    waits: list[float] = []
    for m in sorted(marks, key=lambda m: m.at):
        if m.at >= end:
            break
        if m.annunciated:
            waiting.setdefault(m.alarm_id, m.at)
        elif m.action == ACKNOWLEDGED and m.alarm_id in waiting:
            start = waiting.pop(m.alarm_id)
            if m.at >= since:
                waits.append(m.at - start)
    return waits


@dataclass(frozen=True, slots=True)
class FloodSpan:
    """A flood the collector announced (audit `flood-started` .. `flood-ended`)."""

    started: float
    ended: float | None  # None: still going on at the end of the period
    peak: int | None  # most alarms in one flood window, known once it ended


def flood_spans(entries: Iterable[_Entry], since: float, end: float) -> list[FloodSpan]:
    """Floods that overlap [since, end), from the collector's flood-started / flood-ended
    entries (a flood-ended entry names when its flood began, so one that began before the
    entries given is still found)."""
    spans: list[FloodSpan] = []
    started: float | None = None
    for e in sorted(entries, key=lambda e: e.at):
        if e.at >= end:
            break
        if e.action == "flood-started":
            started = e.at
        elif e.action == "flood-ended":
            try:
                payload = json.loads(e.payload or "{}")
            except ValueError:
                payload = {}
            begun = payload.get("since") if isinstance(payload, dict) else None
            peak = payload.get("peak") if isinstance(payload, dict) else None
            first = started if started is not None else (
                float(begun) if isinstance(begun, int | float) else e.at)
            if e.at >= since:
                spans.append(FloodSpan(first, e.at, peak if isinstance(peak, int) else None))
            started = None
    if started is not None:
        spans.append(FloodSpan(started, None, None))
    return spans


def alarm_performance(
    marks: Iterable[AlarmMark], since: float, end: float, flood_alarms: int = 10,
    flood_window: float = TEN_MINUTES,
) -> AlarmPerformance:
    """Every figure of [since, end) from the alarm marks (give them from the earliest raise of
    any alarm open in the period, so ages and waits that began earlier are right). Rates are
    taken over [since, end): pass as `since` the later of the period's start and the moment the
    store began to keep a record, so time nobody watched does not dilute them."""
    marks = list(marks)
    times = annunciation_times(marks, since, end)
    tens = window_counts(times, since, end, TEN_MINUTES)
    floods = window_counts(times, since, end, flood_window)
    duration = max(0.0, end - since)
    return AlarmPerformance(
        since=since, end=end, annunciations=len(times),
        per_ten_minutes=len(times) * TEN_MINUTES / duration if duration else 0.0,
        peak_ten_minutes=max(tens, default=0), flood_alarms=flood_alarms,
        flood_window=flood_window, windows=len(floods),
        flood_windows=sum(1 for c in floods if c > flood_alarms),
        most_frequent=most_frequent(marks, since, end),
        chattering=chattering(marks, since, end),
        open_at_end=open_at_end(marks, end),
        acknowledge_times=acknowledge_times(marks, since, end),
    )


def guidance_verdict(per_ten_minutes: float) -> str:
    """Where a mean rate stands beside the ISA-18.2 guidance figures (quoted from memory)."""
    if per_ten_minutes <= GUIDE_ACCEPTABLE:
        return "within the figure the guidance calls very likely acceptable (about 1)"
    if per_ten_minutes <= GUIDE_MANAGEABLE:
        return ("above the very likely acceptable figure (about 1), within the most that is "
                "manageable (about 2)")
    return "above the most the guidance calls manageable (about 2)"
