"""Alarm lifecycle over the store: raise, extend, return to normal, acknowledge, shelve, close.

States follow ISA-18.2 / IEC 62682. Each alarm keeps two facts — is its condition present
(`active`) and has a person acknowledged it — plus `shelved_until`; the state is derived:
shelved while the shelving time lies ahead, else unacknowledged (active, not acknowledged),
acknowledged (active, acknowledged), returned-unacknowledged (not active, not acknowledged) and
normal (not active, acknowledged), at which point the alarm is closed.

Priorities: a lower number is more urgent (1 = most urgent). Defaults: out-of-spec 1,
beyond-limits 2, other run rules 3, feed health 4.

Every transition is appended to the audit trail in the same transaction as the change itself.
Hooks run only after the commit, by the caller (see `linewatch.alarms.hooks`), on the "raised"
events these methods return.
"""

from __future__ import annotations

import contextlib
import json
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from linewatch.config.model import (
    DEFAULT_FLOOD_ALARMS,
    DEFAULT_FLOOD_WINDOW,
    DEFAULT_PRIORITIES,
    DEFAULT_REASONS,
    DEFAULT_SHELVE_MAX,
)
from linewatch.domain.alarm_states import SHELVED
from linewatch.domain.clock import iso_time
from linewatch.domain.durations import format_duration
from linewatch.domain.errors import LinewatchError, RuleListError
from linewatch.domain.records import AlarmView, FeedEvent
from linewatch.engine.episodes import DEFAULT_CLEAR_AFTER, returns_at, same_episode
from linewatch.engine.rulebook import BEYOND, RULES, resolve_rules
from linewatch.engine.spec import out_of_spec
from linewatch.store.actor import Actor, who
from linewatch.store.alarm_rows import AlarmRecord

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.db import Store

OUT_OF_SPEC = "out-of-spec"
BEYOND_LIMITS = "beyond-limits"
RUN_RULE = "run-rule"
FEED_HEALTH = "feed-health"
KINDS = (OUT_OF_SPEC, BEYOND_LIMITS, RUN_RULE, FEED_HEALTH)
CONTROL_KINDS = (BEYOND_LIMITS, RUN_RULE)  # the kinds one control-chart alarm can have
MONITOR_SUBJECT = "linewatch"  # whom the "monitoring stopped" alarm is about
STOPPED_RULE = "stopped"
FLOOD_KEY = "alarm_flood"  # meta: the flood going on now (JSON), '' when none

SYSTEM_ACTOR = "linewatch"  # the actor of automatic transitions (raised, returned, expired)
SPEC_CHART = "individuals"  # out-of-spec alarms are about individual measurements
FEED_CHART = "feed"
# Feed events that raise a feed-health alarm, and those that return it to normal.
FEED_RAISE = {"stale": "stale", "stuck": "stuck", "unreadable": "unreadable",
              "no-header": "no-header"}
FEED_CLEAR = {"resumed": "stale", "unstuck": "stuck", "readable": "unreadable",
              "header": "no-header"}

_SPEC_WORDS = {
    "usl": "a measurement above the upper specification limit",
    "lsl": "a measurement below the lower specification limit",
}
_FEED_WORDS = {
    "stale": "no new row for too long (stale feed)",
    "stuck": "the same value repeated again and again (stuck gauge)",
    "unreadable": "the file cannot be read",
    "no-header": "no header line: the file's lines are not read",
    "stopped": "monitoring stopped: the collector keeps failing",
}
# What to do about a feed-health cause when the config gives no reaction plan for it.
_FEED_PLANS = {
    "no-header": ("Have the logger write a line of column names first (e.g. time,od,wall), "
                  "or add one at the top of the file: it is then read from the start."),
}

# Keys of `linewatch alarms list --format jsonl`, in order.
LIST_KEYS = (
    "id",
    "kind",
    "characteristic",
    "chart",
    "rule",
    "first_index",
    "last_index",
    "raised_at",
    "state",
    "priority",
    "acknowledged_by",
    "acknowledged_at",
    "reason",
    "note",
    "shelved_until",
    "signals",
    "episodes",
    "rules",
    "below_lsl",
    "above_usl",
    "escalated_at",
)


@dataclass(frozen=True, slots=True)
class AlarmEvent:
    """A transition that happened: action is one of the audit actions about alarms."""

    action: str
    alarm: AlarmRecord | None  # None for events about all alarms (flood-started, flood-ended)


@dataclass(frozen=True, slots=True)
class Flood:
    """More alarms annunciated in the flood window than an operator can handle."""

    since: float
    count: int  # alarms raised or re-raised in the last flood window
    peak: int




def urgency(alarm: AlarmRecord) -> tuple[int, float, int]:
    """Sort key: most urgent priority first, then newest first."""
    return (alarm.priority, -alarm.raised_at, -alarm.id)


def _control_kind(rules: Iterable[str]) -> str:
    """beyond-limits once any beyond-limits test fired, else run-rule."""
    for rule in rules:
        spec = RULES.get(rule)
        if spec is not None and spec.kind == BEYOND:
            return BEYOND_LIMITS
    return RUN_RULE


def rule_summary(alarm: AlarmRecord) -> str:
    """The alarm's counts in a few words: "we2 ×44 we3 ×37" (most frequent first)."""
    counts = alarm.rule_counts
    if not counts:
        return alarm.rule
    ordered = sorted(counts.items(), key=lambda kv: (-kv[1], kv[0]))
    return " ".join(f"{rule} ×{n}" for rule, n in ordered)


class AlarmBook:
    """The alarm lifecycle for one state directory; pure logic over `Store`."""

    def __init__(self, store: Store, config: Config | None = None) -> None:
        self.store = store
        self.config = config

    # -- configuration ----------------------------------------------------------------------

    def priority(self, kind: str) -> int:
        """Priority of a kind of alarm (lower = more urgent)."""
        if self.config is not None and kind in self.config.alarms.priorities:
            return self.config.alarms.priorities[kind]
        return DEFAULT_PRIORITIES[kind]

    def reasons_for(self, characteristic: str) -> list[str]:
        """Acknowledgement reasons of a characteristic: its config list, else what the store
        remembers of it, else the config-wide list, else the defaults."""
        if self.config is not None:
            c = self.config.characteristic(characteristic)
            if c is not None:
                return list(c.reasons)
        settings = self.store.history.settings(characteristic)
        if settings is not None and settings.reasons:
            return list(settings.reasons)
        if self.config is not None:
            return list(self.config.alarms.reasons)
        return list(DEFAULT_REASONS)

    def resolve_reason(self, characteristic: str, reason: str) -> str:
        """The reason text for `reason` given as text (any case) or as its 1-based number."""
        choices = self.reasons_for(characteristic)
        menu = ", ".join(f"{n} {text}" for n, text in enumerate(choices, start=1))
        text = (reason or "").strip()
        if not text:
            raise LinewatchError(f"a reason is required (for {characteristic}: {menu})")
        if text.isdigit():
            number = int(text)
            if 1 <= number <= len(choices):
                return choices[number - 1]
            raise LinewatchError(f"no reason number {number} for {characteristic} ({menu})")
        for choice in choices:
            if choice.casefold() == text.casefold():
                return choice
        raise LinewatchError(f"unknown reason {text!r} for {characteristic} (choose: {menu})")

    def reaction_plan(self, alarm: AlarmRecord) -> str:
        """The configured text telling the operator what to do about this alarm."""
        key = alarm.rule if alarm.kind in (BEYOND_LIMITS, RUN_RULE) else alarm.kind
        if self.config is not None:
            c = self.config.characteristic(alarm.characteristic)
            if c is not None:
                return c.plan_for(key)
        settings = self.store.history.settings(alarm.characteristic)
        plan = settings.plan_for(key) if settings is not None else ""
        if not plan and alarm.kind == FEED_HEALTH:
            plan = _FEED_PLANS.get(alarm.rule, "")
        return plan

    def describe(self, alarm: AlarmRecord) -> str:
        """The alarm's condition in plain words."""
        if alarm.kind == OUT_OF_SPEC:
            return _SPEC_WORDS.get(alarm.rule, "a measurement outside the specification")
        if alarm.kind == FEED_HEALTH:
            return _FEED_WORDS.get(alarm.rule, alarm.rule)
        spec = RULES.get(alarm.rule)
        if spec is None:
            return alarm.rule
        if self.config is not None:
            c = self.config.characteristic(alarm.characteristic)
            if c is not None and alarm.rule in c.run_lengths:
                with contextlib.suppress(RuleListError):
                    spec = resolve_rules([alarm.rule], c.run_lengths)[0]
        return f"{spec.describe()} ({alarm.chart} chart)"

    def load_config(self, config: Config, now: float | None = None) -> None:
        """Adopt `config`: remember its characteristics' settings and audit it with its hash."""
        now = time.time() if now is None else now
        self.config = config
        with self.store.transaction():
            self.store.history.save_characteristics(config.characteristics)
            self.store.audit.append(
                "config-loaded",
                config.source or "(defaults)",
                {
                    "sha256": config.digest,
                    "characteristics": [c.name for c in config.characteristics],
                },
                at=now,
            )

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
            _control_kind, clear_after,
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
            (OUT_OF_SPEC,), lambda _rules: OUT_OF_SPEC, clear_after,
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
            self._expire_shelves(now, events)
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

    def check_flood(self, now: float | None = None) -> list[AlarmEvent]:
        """Compare the alarms annunciated in the last flood window with the flood threshold;
        the start and end of a flood are audited and remembered in the store (`flood()`)."""
        now = time.time() if now is None else now
        window = self.flood_window()
        limit = self.config.alarms.flood_alarms if self.config else DEFAULT_FLOOD_ALARMS
        events: list[AlarmEvent] = []
        with self.store.transaction():
            count = self.store.alarms.raised_since(now - window)
            state = self.flood()
            if state is None and count > limit:
                self.store.meta.set(FLOOD_KEY, json.dumps({"since": now, "count": count,
                                                           "peak": count}))
                self.store.audit.append("flood-started", "alarms",
                                        {"count": count, "window": window, "limit": limit},
                                        at=now, actor=SYSTEM_ACTOR)
                events.append(AlarmEvent("flood-started", None))
            elif state is not None and count <= limit:
                self.store.meta.set(FLOOD_KEY, "")
                self.store.audit.append("flood-ended", "alarms",
                                        {"since": state.since, "peak": state.peak},
                                        at=now, actor=SYSTEM_ACTOR)
                events.append(AlarmEvent("flood-ended", None))
            elif state is not None and (count != state.count):
                self.store.meta.set(FLOOD_KEY, json.dumps(
                    {"since": state.since, "count": count, "peak": max(count, state.peak)}))
        return events

    def flood_window(self) -> float:
        """Seconds over which annunciated alarms are counted for a flood."""
        return self.config.alarms.flood_window if self.config else DEFAULT_FLOOD_WINDOW

    def flood(self) -> Flood | None:
        """The flood going on now (as the collector last judged it), or None."""
        raw = self.store.meta.get(FLOOD_KEY)
        if not raw:
            return None
        d = json.loads(raw)
        return Flood(float(d["since"]), int(d["count"]), int(d.get("peak", d["count"])))

    def tick(self, now: float | None = None) -> list[AlarmEvent]:
        """Housekeeping the collector runs about once a second: shelves whose time has passed
        are taken off (and audited as unshelved)."""
        now = time.time() if now is None else now
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
        return events

    # -- what people do ---------------------------------------------------------------------

    def acknowledge(
        self,
        alarm_ids: Sequence[int],
        reason: str,
        note: str = "",
        now: float | None = None,
        actor: Actor | None = None,
    ) -> list[AlarmEvent]:
        """Acknowledge alarms with a reason (text or 1-based number) and an optional note. All or
        nothing: an unknown, closed or already acknowledged id changes nothing."""
        if not alarm_ids:
            raise LinewatchError("no alarm id given")
        now = time.time() if now is None else now
        actor = actor or who()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            for alarm_id in dict.fromkeys(alarm_ids):
                alarm = self._open_alarm(alarm_id)
                if alarm.acknowledged:
                    raise LinewatchError(
                        f"alarm {alarm_id} is already acknowledged "
                        f"(by {alarm.acknowledged_by} at {iso_time(alarm.acknowledged_at)})"
                    )
                text = self.resolve_reason(alarm.characteristic, reason)
                self.store.alarms.update(
                    alarm.id,
                    acknowledged=1,
                    acknowledged_by=actor.user,
                    acknowledged_from=actor.address,
                    acknowledged_at=now,
                    reason=text,
                    note=note or None,
                    updated_at=now,
                )
                self.store.audit.append(
                    "acknowledged",
                    f"alarm {alarm.id}",
                    {
                        "characteristic": alarm.characteristic,
                        "rule": alarm.rule,
                        "reason": text,
                        "note": note,
                        "from": actor.address,
                    },
                    at=now,
                    actor=str(actor),
                )
                events.append(AlarmEvent("acknowledged", self._get(alarm.id)))
                if not alarm.active and alarm.state(now) != SHELVED:
                    self._close(events, alarm.id, now)
        return events

    def acknowledge_characteristic(
        self,
        characteristic: str,
        reason: str,
        note: str = "",
        now: float | None = None,
        actor: Actor | None = None,
    ) -> int:
        """Acknowledge every open, unacknowledged alarm of one characteristic; returns how many."""
        self.resolve_reason(characteristic, reason)  # a bad reason is an error even with none open
        with self.store.transaction():
            ids = [a.id for a in self.store.alarms.open(characteristic) if not a.acknowledged]
            if ids:
                self.acknowledge(ids, reason, note, now, actor)
        return len(ids)

    def shelve_limit(self) -> float:
        """The longest shelving time allowed (seconds)."""
        return self.config.alarms.shelve_max if self.config is not None else DEFAULT_SHELVE_MAX

    def _check_shelving(self, seconds: float, reason: str) -> None:
        if not (reason or "").strip():
            raise LinewatchError("a reason is required to shelve an alarm")
        if not seconds > 0:
            raise LinewatchError(f"the shelving time must be more than 0 seconds, got {seconds}")
        limit = self.shelve_limit()
        if seconds > limit:
            raise LinewatchError(
                f"at most {format_duration(limit)} of shelving is allowed "
                f"(alarms.shelve_max), got {format_duration(seconds)}"
            )

    def shelve(
        self,
        alarm_id: int,
        seconds: float,
        reason: str,
        now: float | None = None,
        actor: Actor | None = None,
    ) -> list[AlarmEvent]:
        """Shelve an open alarm for `seconds` (at most `shelve_limit()`) with a free-text
        reason: its episodes are still counted and audited but raise nothing, ring nothing and
        close nothing; it comes back by itself, with what happened meanwhile."""
        self._check_shelving(seconds, reason)
        now = time.time() if now is None else now
        actor = actor or who()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            self._shelve_one(events, self._open_alarm(alarm_id), now + seconds, seconds,
                             reason.strip(), now, str(actor))
        return events

    def shelve_characteristic(
        self,
        characteristic: str,
        seconds: float,
        reason: str,
        now: float | None = None,
        actor: Actor | None = None,
    ) -> int:
        """Shelve every open alarm of one characteristic, and the alarms it raises until the
        time is over (they open shelved and silent); returns how many open alarms it shelved."""
        self._check_shelving(seconds, reason)
        now = time.time() if now is None else now
        actor = actor or who()
        until = now + seconds
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            open_now = self.store.alarms.open(characteristic)
            for alarm in open_now:
                self._shelve_one(events, alarm, until, seconds, reason.strip(), now, str(actor))
            self.store.alarms.set_shelf(characteristic, until, str(actor), reason.strip())
            self.store.audit.append(
                "shelved", characteristic,
                {"characteristic": characteristic, "until": until, "seconds": seconds,
                 "reason": reason.strip(), "alarms": [a.id for a in open_now]},
                at=now, actor=str(actor),
            )
        return len(open_now)

    def _shelve_one(self, events: list[AlarmEvent], alarm: AlarmRecord, until: float,
                    seconds: float, reason: str, now: float, actor: str) -> None:
        self.store.alarms.update(alarm.id, shelved_until=until, shelved_by=actor,
                                 shelve_reason=reason, updated_at=now)
        self.store.audit.append(
            "shelved",
            f"alarm {alarm.id}",
            {"characteristic": alarm.characteristic, "rule": alarm.rule, "until": until,
             "seconds": seconds, "reason": reason},
            at=now,
            actor=actor,
        )
        events.append(AlarmEvent("shelved", self._get(alarm.id)))

    def unshelve(
        self, alarm_id: int, now: float | None = None, actor: Actor | None = None
    ) -> list[AlarmEvent]:
        """Bring a shelved alarm back before its time."""
        now = time.time() if now is None else now
        actor = actor or who()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            alarm = self._open_alarm(alarm_id)
            if alarm.state(now) != SHELVED:
                raise LinewatchError(f"alarm {alarm_id} is not shelved")
            self._end_shelf(events, alarm, now, expired=False, actor=str(actor))
        return events

    # -- reading ----------------------------------------------------------------------------

    def known_characteristics(self) -> list[str]:
        """Every characteristic the config or the store knows, and every file with an alarm
        (what `--characteristic` may name), sorted."""
        names = {c.name for c in self.config.characteristics} if self.config else set()
        names.update(str(r[0]) for r in self.store.query("SELECT name FROM characteristics"))
        names.update(str(r[0]) for r in self.store.query(
            "SELECT DISTINCT characteristic FROM alarms"))  # files too: their feed alarms
        return sorted(names)

    def alarms(self, include_closed: bool = False) -> list[AlarmRecord]:
        """Open alarms (or all), oldest first."""
        return self.store.alarms.all() if include_closed else self.store.alarms.open()

    def view(self, alarm: AlarmRecord, now: float | None = None) -> AlarmView:
        """What the faces show for one alarm."""
        now = time.time() if now is None else now
        return AlarmView(
            id=alarm.id,
            kind=alarm.kind,
            characteristic=alarm.characteristic,
            chart=alarm.chart,
            rule=alarm.rule,
            description=self.describe(alarm),
            state=alarm.state(now),
            priority=alarm.priority,
            raised_at=alarm.raised_at,
            first_index=alarm.first_index,
            last_index=alarm.last_index,
            acknowledged_by=alarm.acknowledged_by,
            acknowledged_at=alarm.acknowledged_at,
            reason=alarm.reason,
            note=alarm.note,
            shelved_until=alarm.shelved_until if alarm.state(now) == SHELVED else None,
            reaction_plan=self.reaction_plan(alarm),
            reasons=self.reasons_for(alarm.characteristic),
            signals=alarm.signals,
            episodes=alarm.episodes,
            counts=rule_summary(alarm),
            active=alarm.active,
            below_lsl=alarm.below_lsl,
            above_usl=alarm.above_usl,
        )

    def views(self, include_closed: bool = False, now: float | None = None) -> list[AlarmView]:
        """Alarm views, most urgent priority first, newest first within a priority."""
        now = time.time() if now is None else now
        records = sorted(self.alarms(include_closed), key=urgency)
        return [self.view(a, now) for a in records]

    def list_record(self, alarm: AlarmRecord, now: float | None = None) -> dict[str, Any]:
        """One alarm with exactly the keys of `alarms list --format jsonl` (times in ISO 8601)."""
        now = time.time() if now is None else now
        state = alarm.state(now)
        record: dict[str, Any] = {
            "id": alarm.id,
            "kind": alarm.kind,
            "characteristic": alarm.characteristic,
            "chart": alarm.chart,
            "rule": alarm.rule,
            "first_index": alarm.first_index,
            "last_index": alarm.last_index,
            "raised_at": iso_time(alarm.raised_at),
            "state": state,
            "priority": alarm.priority,
            "acknowledged_by": alarm.acknowledged_by,
            "acknowledged_at": iso_time(alarm.acknowledged_at),
            "reason": alarm.reason,
            "note": alarm.note,
            "shelved_until": iso_time(alarm.shelved_until) if state == SHELVED else None,
            "signals": alarm.signals,
            "episodes": alarm.episodes,
            "rules": alarm.rule_counts,
            "below_lsl": alarm.below_lsl,
            "above_usl": alarm.above_usl,
            "escalated_at": iso_time(alarm.escalated_at),
        }
        return record

    def hook_payload(self, alarm: AlarmRecord, now: float | None = None) -> dict[str, Any]:
        """What the alarm hook receives on stdin: the list record plus words and the plan."""
        return {
            **self.list_record(alarm, now),
            "description": self.describe(alarm),
            "reaction_plan": self.reaction_plan(alarm),
            "file": alarm.file,
            "detail": alarm.detail,
        }

    # -- internals --------------------------------------------------------------------------

    def _get(self, alarm_id: int) -> AlarmRecord:
        alarm = self.store.alarms.get(alarm_id)
        assert alarm is not None
        return alarm

    def _open_alarm(self, alarm_id: int) -> AlarmRecord:
        alarm = self.store.alarms.get(alarm_id)
        if alarm is None:
            raise LinewatchError(f"no alarm with id {alarm_id}")
        if not alarm.is_open:
            raise LinewatchError(
                f"alarm {alarm_id} is closed (returned to normal and acknowledged)"
            )
        return alarm

    def _observe(
        self,
        characteristic: str,
        chart: str,
        first_index: int,
        last_index: int,
        fired: dict[str, list[int]],
        now: float | None,
        kinds: tuple[str, ...],
        kind_of: Callable[[Iterable[str]], str],
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
            self._expire_shelves(now, events)
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
        alarm: AlarmRecord,
        index: int,
        rules: list[str],
        kind_of: Callable[[Iterable[str]], str],
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
        if alarm.kind == OUT_OF_SPEC:
            alarm.below_lsl = (alarm.below_lsl or 0) + ("lsl" in rules)
            alarm.above_usl = (alarm.above_usl or 0) + ("usl" in rules)
        kind = self._urgent_kind(kind_of, counts)
        priority = self.priority(kind)
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
            if alarm.state(now) != SHELVED:
                events.append(AlarmEvent("escalated", self._get(alarm.id)))

    def _urgent_kind(self, kind_of: Callable[[Iterable[str]], str], rules: Iterable[str]) -> str:
        """The most urgent (configured priority) of the kinds of `rules`, so that the priority
        is that of the most urgent rule seen whatever the config ranks first (ties: KINDS)."""
        kinds = {kind_of([rule]) for rule in rules}
        return min(kinds, key=lambda k: (self.priority(k), KINDS.index(k)))

    def _flush(self, alarm: AlarmRecord, now: float) -> None:
        """Write the counts `_count` gathered in memory."""
        self.store.alarms.update(
            alarm.id, last_index=alarm.last_index, signals=alarm.signals, rules=alarm.rules,
            below_lsl=alarm.below_lsl, above_usl=alarm.above_usl, updated_at=now,
        )

    def _raise(
        self,
        events: list[AlarmEvent],
        kind: str,
        characteristic: str,
        chart: str,
        rule: str,
        first_index: int | None,
        last_index: int | None,
        now: float,
        file: str | None = None,
        detail: str = "",
        priority: int | None = None,
    ) -> AlarmRecord:
        """A new alarm row; born shelved (and silent) while its characteristic is shelved."""
        priority = self.priority(kind) if priority is None else priority
        shelf = self.store.alarms.shelf(characteristic, now)
        spec = kind == OUT_OF_SPEC
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
        alarm = self._get(alarm_id)
        if not shelf:
            events.append(AlarmEvent("raised", alarm))
        return alarm

    def _reraise(
        self, events: list[AlarmEvent], alarm: AlarmRecord, rule: str, index: int | None,
        now: float,
    ) -> AlarmRecord:
        """The next episode of an alarm not yet closed: the same row, unacknowledged again."""
        shelved = alarm.state(now) == SHELVED
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
        current = self._get(alarm.id)
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
        alarm = self._raise(events, FEED_HEALTH, subject, FEED_CHART, rule, None, None, now,
                            file=file, detail=detail, priority=priority)
        self.store.alarms.update(alarm.id, signals=1)

    def _return(
        self, events: list[AlarmEvent], alarm: AlarmRecord, now: float
    ) -> AlarmRecord | None:
        """The condition is gone: returned to normal, and closed when it was acknowledged and is
        not shelved. Returns the alarm, or None when it closed."""
        self.store.alarms.update(alarm.id, active=0, returned_at=now, updated_at=now)
        current = self._get(alarm.id)
        self.store.audit.append(
            "returned-to-normal",
            f"alarm {alarm.id}",
            {"characteristic": alarm.characteristic, "chart": alarm.chart, "rule": alarm.rule,
             "last_index": current.last_index},
            at=now,
            actor=SYSTEM_ACTOR,
        )
        events.append(AlarmEvent("returned-to-normal", current))
        if current.acknowledged and current.state(now) != SHELVED:
            self._close(events, alarm.id, now)
            return None
        return current

    def _close(self, events: list[AlarmEvent], alarm_id: int, now: float) -> None:
        self.store.alarms.update(alarm_id, closed_at=now, updated_at=now)
        alarm = self._get(alarm_id)
        self.store.audit.append(
            "closed",
            f"alarm {alarm_id}",
            {"characteristic": alarm.characteristic, "rule": alarm.rule},
            at=now,
            actor=SYSTEM_ACTOR,
        )
        events.append(AlarmEvent("closed", alarm))

    def _expire_shelves(self, now: float, events: list[AlarmEvent]) -> None:
        for name in self.store.alarms.end_shelves(now):
            self.store.audit.append("unshelved", name, {"characteristic": name, "expired": True},
                                    at=now, actor=SYSTEM_ACTOR)
        for alarm in self.store.alarms.shelf_expired(now):
            self._end_shelf(events, alarm, now, expired=True, actor=SYSTEM_ACTOR)

    def _end_shelf(self, events: list[AlarmEvent], alarm: AlarmRecord, now: float,
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
        current = self._get(alarm.id)
        events.append(AlarmEvent("unshelved", current))
        if current.acknowledged and not current.active:
            self._close(events, alarm.id, now)
