"""The alarm lifecycle: conditions the monitor observes raise, extend, escalate, re-raise and
return alarms, following the episode definition of `linewatch.engine.episodes`.

States follow ISA-18.2 / IEC 62682. Each alarm keeps two facts — is its condition present
(`active`) and has a person acknowledged it — plus `shelved_until`; the state is derived (see
`StoredAlarm.state`), and an alarm both returned to normal and acknowledged is closed.

Every transition is appended to the audit trail in the same transaction as the change itself.
The transitions that operator actions also cause (closing, the end of a shelf) are public here
so that `linewatch.alarms.actions` applies the very same ones.
"""

from __future__ import annotations

import json
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from linewatch.alarms.policy import CONTROL_KINDS, AlarmPolicy, control_kind
from linewatch.domain.alarm_states import AlarmKind, AlarmState
from linewatch.domain.errors import LinewatchError
from linewatch.domain.records import FeedEvent
from linewatch.engine.episodes import DEFAULT_CLEAR_AFTER, returns_at, same_episode
from linewatch.engine.spec import out_of_spec

if TYPE_CHECKING:
    from linewatch.store.alarm_rows import StoredAlarm
    from linewatch.store.db import Store

SYSTEM_ACTOR = "linewatch"  # the actor of automatic transitions (raised, returned, expired)
MONITOR_SUBJECT = "linewatch"  # whom the "monitoring stopped" alarm is about
STOPPED_RULE = "stopped"
SPEC_CHART = "individuals"  # out-of-spec alarms are about individual measurements
FEED_CHART = "feed"
# Feed events that raise a feed-health alarm, and those that return it to normal.
FEED_RAISE = {"stale": "stale", "stuck": "stuck", "unreadable": "unreadable",
              "no-header": "no-header"}
FEED_CLEAR = {"resumed": "stale", "unstuck": "stuck", "readable": "unreadable",
              "header": "no-header"}


@dataclass(frozen=True, slots=True)
class AlarmEvent:
    """A transition that happened: action is one of the audit actions about alarms."""

    action: str
    alarm: StoredAlarm | None  # None for events about all alarms (flood-started, flood-ended)


class Lifecycle:
    """Raises and returns alarms from what the monitor observes; pure logic over `Store`."""

    def __init__(self, store: Store, policy: AlarmPolicy) -> None:
        self.store = store
        self.policy = policy

    # -- conditions observed by the monitor --------------------------------------------------

    def observe_chart(
        self,
        characteristic: str,
        chart: str,
        first_index: int,
        last_index: int,
        fired: dict[str, list[int]],
        now: float | None = None,
        clear_after: int = DEFAULT_CLEAR_AFTER,
    ) -> list[AlarmEvent]:
        """Points first_index..last_index of a chart were judged; `fired` maps each rule to the
        indices at which it fired. Every rule of the chart feeds ONE alarm, whose episodes follow
        `linewatch.engine.episodes`: an episode returns to normal `clear_after` quiet points
        after its last firing, and the next episode re-raises the same alarm unless it was
        closed (acknowledged and returned) meanwhile."""
        return self._observe(
            characteristic, chart, first_index, last_index, fired, now, CONTROL_KINDS,
            control_kind, clear_after,
        )

    def observe_spec(
        self,
        characteristic: str,
        first_index: int,
        values: Sequence[float],
        lsl: float | None,
        usl: float | None,
        now: float | None = None,
        clear_after: int = DEFAULT_CLEAR_AFTER,
    ) -> list[AlarmEvent]:
        """Individual measurements first_index.. were read: nonconforming ones (rule "usl"
        above USL, "lsl" below LSL; a value equal to a limit conforms) form the episodes of one
        out-of-spec alarm per characteristic, under the same `clear_after` counted in
        measurements; the alarm counts the parts below LSL and above USL."""
        if not len(values):
            return []
        found = out_of_spec(values, lsl, usl, first_index)
        return self._observe(
            characteristic, SPEC_CHART, found.first, found.last, found.fired(), now,
            (AlarmKind.OUT_OF_SPEC,), lambda _rules: AlarmKind.OUT_OF_SPEC, clear_after,
        )

    def observe_feed(
        self, event: FeedEvent, now: float | None = None, characteristic: str | None = None
    ) -> list[AlarmEvent]:
        """A feed event: stale / stuck / unreadable / no-header raise a feed-health alarm (one
        per feed and cause; a condition that comes back before the alarm was closed re-raises
        it); resumed / unstuck / readable / header return it to normal. The alarm belongs to
        `characteristic` when given (a stuck gauge), else to the file."""
        now = time.time() if now is None else now
        subject = characteristic or event.file
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self.expire_shelves(now, events)
            if event.kind in FEED_RAISE:
                self._raise_condition(events, subject, FEED_RAISE[event.kind], now,
                                      file=event.file, detail=event.detail)
            elif event.kind in FEED_CLEAR:
                alarm = self.store.alarms.active(subject, FEED_CHART, FEED_CLEAR[event.kind])
                if alarm is not None:
                    self._return(events, alarm, now)
        return events

    def monitoring_failed(self, reason: str, now: float | None = None) -> list[AlarmEvent]:
        """The collector failed again and again: a priority-1 feed-health alarm "monitoring
        stopped" (one at a time), so the failure reaches the queue and the hook."""
        now = time.time() if now is None else now
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._raise_condition(events, MONITOR_SUBJECT, STOPPED_RULE, now,
                                  detail=f"monitoring stopped: {reason}", priority=1)
        return events

    def monitoring_resumed(self, now: float | None = None) -> list[AlarmEvent]:
        """A pass succeeded again: the "monitoring stopped" alarm returns to normal."""
        now = time.time() if now is None else now
        events: list[AlarmEvent] = []
        with self.store.transaction():
            alarm = self.store.alarms.active(MONITOR_SUBJECT, FEED_CHART, STOPPED_RULE)
            if alarm is not None:
                self._return(events, alarm, now)
        return events

    def tick(self, now: float | None = None) -> list[AlarmEvent]:
        """Housekeeping the collector runs about once a second: shelves whose time has passed
        are taken off (and audited as unshelved)."""
        now = time.time() if now is None else now
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self.expire_shelves(now, events)
        return events

    # -- transitions operator actions share --------------------------------------------------

    def get(self, alarm_id: int) -> StoredAlarm:
        """An alarm known to exist (just written in this transaction)."""
        alarm = self.store.alarms.get(alarm_id)
        assert alarm is not None
        return alarm

    def open_alarm(self, alarm_id: int) -> StoredAlarm:
        """An alarm a person names: it must exist and not be closed."""
        alarm = self.store.alarms.get(alarm_id)
        if alarm is None:
            raise LinewatchError(f"no alarm with id {alarm_id}")
        if not alarm.is_open:
            raise LinewatchError(
                f"alarm {alarm_id} is closed (returned to normal and acknowledged)"
            )
        return alarm

    def close(self, events: list[AlarmEvent], alarm_id: int, now: float) -> None:
        """Returned to normal and acknowledged: the alarm is closed."""
        self.store.alarms.update(alarm_id, closed_at=now, updated_at=now)
        alarm = self.get(alarm_id)
        self.store.audit.append(
            "closed",
            f"alarm {alarm_id}",
            {"characteristic": alarm.characteristic, "rule": alarm.rule},
            at=now,
            actor=SYSTEM_ACTOR,
        )
        events.append(AlarmEvent("closed", alarm))

    def expire_shelves(self, now: float, events: list[AlarmEvent]) -> None:
        """Take off the shelves (of characteristics and of alarms) whose time has passed."""
        for name in self.store.alarms.end_shelves(now):
            self.store.audit.append("unshelved", name, {"characteristic": name, "expired": True},
                                    at=now, actor=SYSTEM_ACTOR)
        for alarm in self.store.alarms.shelf_expired(now):
            self.end_shelf(events, alarm, now, expired=True, actor=SYSTEM_ACTOR)

    def end_shelf(self, events: list[AlarmEvent], alarm: StoredAlarm, now: float,
                  expired: bool, actor: str) -> None:
        """Back in annunciation, with what happened meanwhile; an alarm acknowledged and
        returned while shelved closes now."""
        self.store.alarms.update(alarm.id, shelved_until=None, updated_at=now)
        self.store.audit.append(
            "unshelved",
            f"alarm {alarm.id}",
            {"characteristic": alarm.characteristic, "rule": alarm.rule, "expired": expired,
             "until": alarm.shelved_until, "episodes": alarm.episodes,
             "signals": alarm.signals},
            at=now,
            actor=actor,
        )
        current = self.get(alarm.id)
        events.append(AlarmEvent("unshelved", current))
        if current.acknowledged and not current.active:
            self.close(events, alarm.id, now)

    # -- internals --------------------------------------------------------------------------

    def _observe(
        self,
        characteristic: str,
        chart: str,
        first_index: int,
        last_index: int,
        fired: dict[str, list[int]],
        now: float | None,
        kinds: tuple[AlarmKind, ...],
        kind_of: Callable[[Iterable[str]], AlarmKind],
        clear_after: int,
    ) -> list[AlarmEvent]:
        """Apply the episode definition to newly judged points first_index..last_index."""
        if last_index < first_index:
            raise ValueError(f"empty range {first_index}..{last_index}")
        if clear_after < 1:
            raise ValueError(f"clear_after must be at least 1, got {clear_after}")
        now = time.time() if now is None else now
        by_point: dict[int, list[str]] = {}
        for rule in sorted(fired):
            for i in fired[rule]:
                # a point judged before (in an earlier phase or pass) was counted then
                if first_index <= i <= last_index:
                    by_point.setdefault(i, []).append(rule)
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self.expire_shelves(now, events)
            self.store.alarms.add_signals(
                characteristic, chart, [(i, r) for i in sorted(by_point) for r in by_point[i]])
            alarm = self.store.alarms.open_on_chart(characteristic, chart, kinds)
            for i in sorted(by_point):
                rules = by_point[i]
                if (alarm is not None and alarm.active and alarm.last_index is not None
                        and not same_episode(alarm.last_index, i, clear_after)):
                    self._flush(alarm, now)
                    alarm = self._return(events, alarm, now)
                if alarm is None:
                    alarm = self._raise(events, self._urgent_kind(kind_of, rules),
                                        characteristic, chart, rules[0], i, i, now)
                elif not alarm.active:
                    alarm = self._reraise(events, alarm, rules[0], i, now)
                self._count(events, alarm, i, rules, kind_of, now)
            if alarm is not None:
                self._flush(alarm, now)
                if (alarm.active and alarm.last_index is not None
                        and last_index >= returns_at(alarm.last_index, clear_after)):
                    self._return(events, alarm, now)
        return events

    def _count(
        self,
        events: list[AlarmEvent],
        alarm: StoredAlarm,
        index: int,
        rules: list[str],
        kind_of: Callable[[Iterable[str]], AlarmKind],
        now: float,
    ) -> None:
        """Count one signalling point into the alarm (in memory; `_flush` writes it) and
        escalate it when a more urgent kind of rule appears."""
        counts = alarm.rule_counts
        for rule in rules:
            counts[rule] = counts.get(rule, 0) + 1
        alarm.rules = json.dumps(counts, sort_keys=True)
        alarm.signals += 1
        alarm.last_index = index
        if alarm.kind == AlarmKind.OUT_OF_SPEC:
            alarm.below_lsl = (alarm.below_lsl or 0) + ("lsl" in rules)
            alarm.above_usl = (alarm.above_usl or 0) + ("usl" in rules)
        kind = self._urgent_kind(kind_of, counts)
        priority = self.policy.priority(kind)
        if priority < alarm.priority:
            self._flush(alarm, now)
            self.store.alarms.update(alarm.id, kind=kind, priority=priority, escalated_at=now,
                                     updated_at=now)
            self.store.audit.append(
                "escalated", f"alarm {alarm.id}",
                {"characteristic": alarm.characteristic, "chart": alarm.chart, "kind": kind,
                 "priority": priority, "from_priority": alarm.priority, "rule": rules[0],
                 "index": index},
                at=now, actor=SYSTEM_ACTOR,
            )
            alarm.kind, alarm.priority, alarm.escalated_at = kind, priority, now
            if alarm.state(now) != AlarmState.SHELVED:
                events.append(AlarmEvent("escalated", self.get(alarm.id)))

    def _urgent_kind(
        self, kind_of: Callable[[Iterable[str]], AlarmKind], rules: Iterable[str]
    ) -> AlarmKind:
        """The most urgent of the kinds of `rules`."""
        return self.policy.most_urgent(kind_of([rule]) for rule in rules)

    def _flush(self, alarm: StoredAlarm, now: float) -> None:
        """Write the counts `_count` gathered in memory."""
        self.store.alarms.update(
            alarm.id, last_index=alarm.last_index, signals=alarm.signals, rules=alarm.rules,
            below_lsl=alarm.below_lsl, above_usl=alarm.above_usl, updated_at=now,
        )

    def _raise(
        self,
        events: list[AlarmEvent],
        kind: AlarmKind,
        characteristic: str,
        chart: str,
        rule: str,
        first_index: int | None,
        last_index: int | None,
        now: float,
        file: str | None = None,
        detail: str = "",
        priority: int | None = None,
    ) -> StoredAlarm:
        """A new alarm row; born shelved (and silent) while its characteristic is shelved."""
        priority = self.policy.priority(kind) if priority is None else priority
        shelf = self.store.alarms.shelf(characteristic, now)
        spec = kind == AlarmKind.OUT_OF_SPEC
        alarm_id = self.store.alarms.insert(
            kind=kind,
            characteristic=characteristic,
            chart=chart,
            rule=rule,
            first_index=first_index,
            last_index=last_index if first_index is None else first_index - 1,
            priority=priority,
            raised_at=now,
            updated_at=now,
            active=1,
            file=file,
            detail=detail,
            episode_first=first_index,
            below_lsl=0 if spec else None,
            above_usl=0 if spec else None,
            shelved_until=shelf.until if shelf else None,
            shelved_by=shelf.actor if shelf else None,
            shelve_reason=shelf.reason if shelf else None,
        )
        payload: dict[str, Any] = {
            "kind": kind, "characteristic": characteristic, "chart": chart, "rule": rule,
            "first_index": first_index, "priority": priority, "detail": detail,
        }
        if shelf:
            payload["shelved"] = True
        self.store.audit.append("raised", f"alarm {alarm_id}", payload, at=now,
                                actor=SYSTEM_ACTOR)
        alarm = self.get(alarm_id)
        if not shelf:
            events.append(AlarmEvent("raised", alarm))
        return alarm

    def _reraise(
        self, events: list[AlarmEvent], alarm: StoredAlarm, rule: str, index: int | None,
        now: float,
    ) -> StoredAlarm:
        """The next episode of an alarm not yet closed: the same row, unacknowledged again."""
        shelved = alarm.state(now) == AlarmState.SHELVED
        self.store.alarms.update(
            alarm.id, active=1, acknowledged=0, acknowledged_by=None, acknowledged_from=None,
            acknowledged_at=None, returned_at=None, episodes=alarm.episodes + 1,
            episode_first=index, updated_at=now,
        )
        payload: dict[str, Any] = {"characteristic": alarm.characteristic, "chart": alarm.chart,
                                   "rule": rule, "index": index}
        if shelved:
            payload["shelved"] = True
        self.store.audit.append("re-raised", f"alarm {alarm.id}", payload, at=now,
                                actor=SYSTEM_ACTOR)
        current = self.get(alarm.id)
        if not shelved:
            events.append(AlarmEvent("re-raised", current))
        return current

    def _raise_condition(
        self, events: list[AlarmEvent], subject: str, rule: str, now: float,
        file: str | None = None, detail: str = "", priority: int | None = None,
    ) -> None:
        """Raise a feed-health condition unless it is present already; re-raise its alarm when
        one is still open (returned but not yet acknowledged)."""
        if self.store.alarms.active(subject, FEED_CHART, rule) is not None:
            return
        open_ones = [a for a in self.store.alarms.open(subject)
                     if a.chart == FEED_CHART and a.rule == rule]
        if open_ones:
            alarm = self._reraise(events, open_ones[-1], rule, None, now)
            self.store.alarms.update(alarm.id, signals=alarm.signals + 1, detail=detail)
            return
        alarm = self._raise(events, AlarmKind.FEED_HEALTH, subject, FEED_CHART, rule, None,
                            None, now, file=file, detail=detail, priority=priority)
        self.store.alarms.update(alarm.id, signals=1)

    def _return(
        self, events: list[AlarmEvent], alarm: StoredAlarm, now: float
    ) -> StoredAlarm | None:
        """The condition is gone: returned to normal, and closed when it was acknowledged and is
        not shelved. Returns the alarm, or None when it closed."""
        self.store.alarms.update(alarm.id, active=0, returned_at=now, updated_at=now)
        current = self.get(alarm.id)
        self.store.audit.append(
            "returned-to-normal",
            f"alarm {alarm.id}",
            {"characteristic": alarm.characteristic, "chart": alarm.chart, "rule": alarm.rule,
             "last_index": current.last_index},
            at=now,
            actor=SYSTEM_ACTOR,
        )
        events.append(AlarmEvent("returned-to-normal", current))
        if current.acknowledged and current.state(now) != AlarmState.SHELVED:
            self.close(events, alarm.id, now)
            return None
        return current
