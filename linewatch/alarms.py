"""Alarm lifecycle over the store: raise, extend, return to normal, acknowledge, shelve, close.

States follow ISA-18.2 / IEC 62682. Each alarm keeps two facts — is its condition present
(`active`) and has a person acknowledged it — plus `shelved_until`; the state is derived:
shelved while the shelving time lies ahead, else unacknowledged (active, not acknowledged),
acknowledged (active, acknowledged), returned-unacknowledged (not active, not acknowledged) and
normal (not active, acknowledged), at which point the alarm is closed.

Priorities: a lower number is more urgent (1 = most urgent). Defaults: out-of-spec 1,
beyond-limits 2, other run rules 3, feed health 4.

Every transition is appended to the audit trail in the same transaction as the change itself.
Hooks run only after the commit, by the caller (see `linewatch.hooks`), on the "raised" events
these methods return.
"""

from __future__ import annotations

import contextlib
import time
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import TYPE_CHECKING, Any

from linewatch.config import DEFAULT_PRIORITIES, DEFAULT_REASONS
from linewatch.engine.rulebook import BEYOND, RULES, RuleListError, resolve_rules
from linewatch.errors import LinewatchError
from linewatch.model import FeedEvent
from linewatch.store.actor import Actor, who
from linewatch.store.alarm_rows import AlarmRecord
from linewatch.view import SHELVED, AlarmView

if TYPE_CHECKING:
    from linewatch.config import Config
    from linewatch.store.db import Store

OUT_OF_SPEC = "out-of-spec"
BEYOND_LIMITS = "beyond-limits"
RUN_RULE = "run-rule"
FEED_HEALTH = "feed-health"
KINDS = (OUT_OF_SPEC, BEYOND_LIMITS, RUN_RULE, FEED_HEALTH)

SYSTEM_ACTOR = "linewatch"  # the actor of automatic transitions (raised, returned, expired)
SPEC_CHART = "individuals"  # out-of-spec alarms are about individual measurements
FEED_CHART = "feed"
# Feed events that raise a feed-health alarm, and those that return it to normal.
FEED_RAISE = {"stale": "stale", "stuck": "stuck", "unreadable": "unreadable"}
FEED_CLEAR = {"resumed": "stale", "unstuck": "stuck", "readable": "unreadable"}

_SPEC_WORDS = {
    "usl": "a measurement above the upper specification limit",
    "lsl": "a measurement below the lower specification limit",
}
_FEED_WORDS = {
    "stale": "no new row for too long (stale feed)",
    "stuck": "the same value repeated again and again (stuck gauge)",
    "unreadable": "the file cannot be read",
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
)


@dataclass(frozen=True, slots=True)
class AlarmEvent:
    """A transition that happened: action is one of the audit actions about alarms."""

    action: str
    alarm: AlarmRecord


def iso_time(epoch: float | None) -> str | None:
    """Local time with its UTC offset, to the second (None stays None)."""
    if epoch is None:
        return None
    return datetime.fromtimestamp(epoch).astimezone().isoformat(timespec="seconds")


def urgency(alarm: AlarmRecord) -> tuple[int, float, int]:
    """Sort key: most urgent priority first, then newest first."""
    return (alarm.priority, -alarm.raised_at, -alarm.id)


def _runs(indices: Iterable[int]) -> list[tuple[int, int]]:
    """Maximal stretches of consecutive integers, as (first, last) pairs, ascending."""
    runs: list[tuple[int, int]] = []
    for i in sorted(set(indices)):
        if runs and i == runs[-1][1] + 1:
            runs[-1] = (runs[-1][0], i)
        else:
            runs.append((i, i))
    return runs


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
        return settings.plan_for(key) if settings is not None else ""

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
    ) -> list[AlarmEvent]:
        """Points first_index..last_index of a chart were evaluated; `fired` maps each rule to
        the indices at which it fired. A rule alarm is one maximal stretch of consecutive points
        at which the rule fires: the open alarm whose last point is first_index - 1 is extended;
        otherwise a new one is raised; an alarm returns to normal at the first evaluated point
        where its rule did not fire."""

        def kind_of(rule: str) -> str:
            spec = RULES.get(rule)
            return BEYOND_LIMITS if spec is not None and spec.kind == BEYOND else RUN_RULE

        return self._observe(
            characteristic, chart, first_index, last_index, fired, now, (BEYOND_LIMITS, RUN_RULE),
            kind_of,
        )

    def observe_spec(
        self,
        characteristic: str,
        first_index: int,
        values: Sequence[float],
        lsl: float | None,
        usl: float | None,
        now: float | None = None,
    ) -> list[AlarmEvent]:
        """Individual measurements first_index.. were read: consecutive ones above USL (rule
        "usl") or below LSL (rule "lsl") form one out-of-spec alarm, which returns to normal with
        the next measurement inside the specification. A value equal to a limit conforms."""
        if not len(values):
            return []
        fired: dict[str, list[int]] = {"usl": [], "lsl": []}
        for k, v in enumerate(values):
            if usl is not None and v > usl:
                fired["usl"].append(first_index + k)
            elif lsl is not None and v < lsl:
                fired["lsl"].append(first_index + k)
        return self._observe(
            characteristic, SPEC_CHART, first_index, first_index + len(values) - 1, fired, now,
            (OUT_OF_SPEC,), lambda _rule: OUT_OF_SPEC,
        )

    def observe_feed(
        self, event: FeedEvent, now: float | None = None, characteristic: str | None = None
    ) -> list[AlarmEvent]:
        """A feed event: stale / stuck / unreadable raise a feed-health alarm (one at a time per
        feed and condition); resumed / unstuck / readable return it to normal. The alarm belongs
        to `characteristic` when given (a stuck gauge), else to the file."""
        now = time.time() if now is None else now
        subject = characteristic or event.file
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            if event.kind in FEED_RAISE:
                rule = FEED_RAISE[event.kind]
                if self.store.alarms.active(subject, FEED_CHART, rule) is None:
                    self._raise(
                        events, FEED_HEALTH, subject, FEED_CHART, rule, None, None, now,
                        file=event.file, detail=event.detail,
                    )
            elif event.kind in FEED_CLEAR:
                alarm = self.store.alarms.active(subject, FEED_CHART, FEED_CLEAR[event.kind])
                if alarm is not None:
                    self._return(events, alarm, now)
        return events

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
                if not alarm.active:
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

    def shelve(
        self,
        alarm_id: int,
        seconds: float,
        reason: str,
        now: float | None = None,
        actor: Actor | None = None,
    ) -> list[AlarmEvent]:
        """Shelve an open alarm for `seconds` with a free-text reason; it keeps being recorded and
        updated, and comes back by itself when the time has passed."""
        if not (reason or "").strip():
            raise LinewatchError("a reason is required to shelve an alarm")
        if not seconds > 0:
            raise LinewatchError(f"the shelving time must be more than 0 seconds, got {seconds}")
        now = time.time() if now is None else now
        actor = actor or who()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            alarm = self._open_alarm(alarm_id)
            until = now + seconds
            self.store.alarms.update(
                alarm.id,
                shelved_until=until,
                shelved_by=str(actor),
                shelve_reason=reason.strip(),
                updated_at=now,
            )
            self.store.audit.append(
                "shelved",
                f"alarm {alarm.id}",
                {"characteristic": alarm.characteristic, "rule": alarm.rule, "until": until,
                 "seconds": seconds, "reason": reason.strip()},
                at=now,
                actor=str(actor),
            )
            events.append(AlarmEvent("shelved", self._get(alarm.id)))
        return events

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
            self.store.alarms.update(alarm.id, shelved_until=None, updated_at=now)
            self.store.audit.append(
                "unshelved",
                f"alarm {alarm.id}",
                {"characteristic": alarm.characteristic, "rule": alarm.rule, "expired": False},
                at=now,
                actor=str(actor),
            )
            events.append(AlarmEvent("unshelved", self._get(alarm.id)))
        return events

    # -- reading ----------------------------------------------------------------------------

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
        kind_of: Callable[[str], str],
    ) -> list[AlarmEvent]:
        if last_index < first_index:
            raise ValueError(f"empty range {first_index}..{last_index}")
        now = time.time() if now is None else now
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self._expire_shelves(now, events)
            active = {
                a.rule: a
                for a in self.store.alarms.active_on_chart(characteristic, chart)
                if a.kind in kinds
            }
            for rule in sorted(set(fired) | set(active)):
                indices = fired.get(rule, [])
                outside = [i for i in indices if not first_index <= i <= last_index]
                if outside:
                    raise ValueError(
                        f"{rule} fired at {outside[0]}, outside {first_index}..{last_index}"
                    )
                runs = _runs(indices)
                alarm = active.get(rule)
                if alarm is not None:
                    continues = (
                        runs and runs[0][0] == first_index and alarm.last_index == first_index - 1
                    )
                    if continues:
                        _, end = runs.pop(0)
                        self.store.alarms.update(alarm.id, last_index=end, updated_at=now)
                        if end < last_index:
                            self._return(events, alarm, now)
                    else:
                        self._return(events, alarm, now)
                for start, end in runs:
                    new = self._raise(
                        events, kind_of(rule), characteristic, chart, rule, start, end, now
                    )
                    if end < last_index:
                        self._return(events, new, now)
        return events

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
    ) -> AlarmRecord:
        priority = self.priority(kind)
        alarm_id = self.store.alarms.insert(
            kind=kind,
            characteristic=characteristic,
            chart=chart,
            rule=rule,
            first_index=first_index,
            last_index=last_index,
            priority=priority,
            raised_at=now,
            updated_at=now,
            active=1,
            file=file,
            detail=detail,
        )
        self.store.audit.append(
            "raised",
            f"alarm {alarm_id}",
            {"kind": kind, "characteristic": characteristic, "chart": chart, "rule": rule,
             "first_index": first_index, "priority": priority, "detail": detail},
            at=now,
            actor=SYSTEM_ACTOR,
        )
        alarm = self._get(alarm_id)
        events.append(AlarmEvent("raised", alarm))
        return alarm

    def _return(self, events: list[AlarmEvent], alarm: AlarmRecord, now: float) -> None:
        self.store.alarms.update(alarm.id, active=0, returned_at=now, updated_at=now)
        current = self._get(alarm.id)
        self.store.audit.append(
            "returned-to-normal",
            f"alarm {alarm.id}",
            {"characteristic": alarm.characteristic, "rule": alarm.rule,
             "last_index": current.last_index},
            at=now,
            actor=SYSTEM_ACTOR,
        )
        events.append(AlarmEvent("returned-to-normal", current))
        if current.acknowledged:
            self._close(events, alarm.id, now)

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
        for alarm in self.store.alarms.shelf_expired(now):
            self.store.alarms.update(alarm.id, shelved_until=None, updated_at=now)
            self.store.audit.append(
                "unshelved",
                f"alarm {alarm.id}",
                {"characteristic": alarm.characteristic, "rule": alarm.rule, "expired": True,
                 "until": alarm.shelved_until},
                at=now,
                actor=SYSTEM_ACTOR,
            )
            events.append(AlarmEvent("unshelved", self._get(alarm.id)))
