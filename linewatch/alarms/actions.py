"""What people do to alarms: acknowledge (with a reason and an optional note), shelve for a
while, shelve a whole characteristic, unshelve. Each action is all or nothing, names its actor
(user and SSH address) in the audit trail, and applies the lifecycle's own transitions."""

from __future__ import annotations

import time
from collections.abc import Sequence
from typing import TYPE_CHECKING

from linewatch.alarms.lifecycle import AlarmEvent, Lifecycle
from linewatch.alarms.policy import AlarmPolicy
from linewatch.domain.alarm_states import AlarmState
from linewatch.domain.clock import iso_time
from linewatch.domain.durations import format_duration
from linewatch.domain.errors import LinewatchError
from linewatch.store.actor import Actor, who

if TYPE_CHECKING:
    from linewatch.store.alarm_rows import StoredAlarm
    from linewatch.store.db import Store


class OperatorActions:
    """Acknowledging and shelving, over the store, with the policy's reasons and limits."""

    def __init__(self, store: Store, policy: AlarmPolicy, lifecycle: Lifecycle) -> None:
        self.store = store
        self.policy = policy
        self.lifecycle = lifecycle

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
            self.lifecycle.expire_shelves(now, events)
            for alarm_id in dict.fromkeys(alarm_ids):
                alarm = self.lifecycle.open_alarm(alarm_id)
                if alarm.acknowledged:
                    raise LinewatchError(
                        f"alarm {alarm_id} is already acknowledged "
                        f"(by {alarm.acknowledged_by} at {iso_time(alarm.acknowledged_at)})"
                    )
                text = self.policy.resolve_reason(alarm.characteristic, reason)
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
                events.append(AlarmEvent("acknowledged", self.lifecycle.get(alarm.id)))
                if not alarm.active and alarm.state(now) != AlarmState.SHELVED:
                    self.lifecycle.close(events, alarm.id, now)
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
        # a bad reason is an error even with no alarm open
        self.policy.resolve_reason(characteristic, reason)
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
        """Shelve an open alarm for `seconds` (at most the policy's shelve limit) with a
        free-text reason: its episodes are still counted and audited but raise nothing, ring
        nothing and close nothing; it comes back by itself, with what happened meanwhile."""
        self._check_shelving(seconds, reason)
        now = time.time() if now is None else now
        actor = actor or who()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self.lifecycle.expire_shelves(now, events)
            self._shelve_one(events, self.lifecycle.open_alarm(alarm_id), now + seconds,
                             seconds, reason.strip(), now, str(actor))
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
            self.lifecycle.expire_shelves(now, events)
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

    def unshelve(
        self, alarm_id: int, now: float | None = None, actor: Actor | None = None
    ) -> list[AlarmEvent]:
        """Bring a shelved alarm back before its time."""
        now = time.time() if now is None else now
        actor = actor or who()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            self.lifecycle.expire_shelves(now, events)
            alarm = self.lifecycle.open_alarm(alarm_id)
            if alarm.state(now) != AlarmState.SHELVED:
                raise LinewatchError(f"alarm {alarm_id} is not shelved")
            self.lifecycle.end_shelf(events, alarm, now, expired=False, actor=str(actor))
        return events

    def _check_shelving(self, seconds: float, reason: str) -> None:
        if not (reason or "").strip():
            raise LinewatchError("a reason is required to shelve an alarm")
        if not seconds > 0:
            raise LinewatchError(f"the shelving time must be more than 0 seconds, got {seconds}")
        limit = self.policy.shelve_limit()
        if seconds > limit:
            raise LinewatchError(
                f"at most {format_duration(limit)} of shelving is allowed "
                f"(alarms.shelve_max), got {format_duration(seconds)}"
            )

    def _shelve_one(self, events: list[AlarmEvent], alarm: StoredAlarm, until: float,
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
        events.append(AlarmEvent("shelved", self.lifecycle.get(alarm.id)))
