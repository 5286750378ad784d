"""Telling the outside world, after a commit: records through the faces' `emit` callback
(`check`'s jsonl plus feed, alarm, flood, hook and error records) and alarm events to the alarm
hook, and an `alarm` record for every alarm whose state changed since the last look — by this
instance, another one or the shell.

Nothing here writes the store; it is called only with what a unit already committed.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from linewatch.alarms.book import AlarmBook, AlarmEvent
    from linewatch.alarms.hooks import HookOutcome, HookRunner
    from linewatch.config.model import AlarmConfig
    from linewatch.store.db import Store

Emit = Callable[[dict[str, Any]], None]
ANNOUNCED = ("raised", "re-raised", "escalated")  # alarm events that reach the hook


class Announcer:
    """The `emit` callback, the alarm hook runner (started on first use) and what the alarm
    list looked like at the last look."""

    def __init__(self, store: Store, alarms: AlarmBook, config: AlarmConfig,
                 emit: Emit | None = None) -> None:
        self.store = store
        self.alarms = alarms
        self.config = config
        self.emit: Emit = emit or (lambda record: None)
        self._hooks: HookRunner | None = None
        # alarm id -> (state, acknowledged by, last index) at the last look
        self._alarm_states: dict[int, tuple[str, str | None, int | None]] = {}

    def records(self, records: Iterable[dict[str, Any]]) -> None:
        """Emit the (non-empty) records, in order."""
        for rec in records:
            if rec:
                self.emit(rec)

    def alarm_events(self, events: list[AlarmEvent]) -> None:
        """Say when a flood began or ended, and fire the hook for raised, re-raised and
        escalated alarms."""
        for ev in events:
            if ev.alarm is None:  # about all alarms: a flood began or ended
                flood = self.alarms.flood()
                self.emit({"type": "flood", "event": ev.action,
                           "count": flood.count if flood else None})
        if not self.config.hook:
            return
        hooks = self._runner()
        for ev in events:
            if ev.action in ANNOUNCED and ev.alarm is not None:
                hooks.fire({**self.alarms.hook_payload(ev.alarm), "action": ev.action})

    def hook_only(self, payload: dict[str, Any]) -> None:
        """Fire the hook with a payload that could not be stored (the store itself fails)."""
        if self.config.hook:
            self._runner().fire(payload)

    def alarm_changes(self, now: float) -> None:
        """Emit an `alarm` record for every alarm whose state changed since the last look
        (raised, acknowledged, shelved, returned, closed)."""
        current = {a.id: a for a in self.alarms.alarms()}
        seen = self._alarm_states
        changed = [a for a in current.values()
                   if seen.get(a.id) != (a.state(now), a.acknowledged_by, a.last_index)]
        for alarm_id in (i for i in seen if i not in current):
            record = self.store.alarms.get(alarm_id)
            if record is not None:
                changed.append(record)
        self._alarm_states = {a.id: (a.state(now), a.acknowledged_by, a.last_index)
                              for a in current.values()}
        for a in sorted(changed, key=lambda a: a.id):
            self.emit({"type": "alarm", **self.alarms.list_record(a, now)})

    def wait(self) -> None:
        """Let running hooks finish or reach their time limit, so their outcome is reported."""
        if self._hooks is not None:
            self._hooks.wait(self._hooks.timeout + 1.0)

    def _runner(self) -> HookRunner:
        if self._hooks is None:
            from linewatch.alarms.hooks import HookRunner

            self._hooks = HookRunner(self.config.hook, self.config.hook_timeout,
                                     on_outcome=self._hook_outcome)
        return self._hooks

    def _hook_outcome(self, outcome: HookOutcome) -> None:
        if not outcome.ok:
            self.emit({"type": "hook", "alarm": outcome.alarm_id, "problem": outcome.message})
