"""An alarm as others receive it: the view the faces draw, the record of `alarms list --format
jsonl`, and the hook's payload; lists come in the one urgency order of the domain."""

from __future__ import annotations

import time
from collections.abc import Iterable
from typing import TYPE_CHECKING, Any

from linewatch.alarms.policy import AlarmPolicy
from linewatch.alarms.wording import describe, rule_summary
from linewatch.domain.alarm_states import AlarmState, urgency
from linewatch.domain.clock import iso_time
from linewatch.domain.records import AlarmView

if TYPE_CHECKING:
    from linewatch.store.alarm_rows import StoredAlarm

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


def ranked(alarms: Iterable[StoredAlarm], now: float) -> list[StoredAlarm]:
    """`alarms` most urgent first (see `linewatch.domain.alarm_states.urgency`)."""
    return sorted(alarms, key=lambda a: urgency(a.state(now), a.priority, a.raised_at, a.id))


class AlarmListing:
    """Builds views, list records and hook payloads with the policy's reasons and plans."""

    def __init__(self, policy: AlarmPolicy) -> None:
        self.policy = policy

    def describe(self, alarm: StoredAlarm) -> str:
        """The alarm's condition in plain words."""
        return describe(alarm, self.policy.config)

    def view(self, alarm: StoredAlarm, now: float | None = None) -> AlarmView:
        """What the faces show for one alarm."""
        now = time.time() if now is None else now
        state = alarm.state(now)
        return AlarmView(
            id=alarm.id,
            kind=alarm.kind,
            characteristic=alarm.characteristic,
            chart=alarm.chart,
            rule=alarm.rule,
            description=self.describe(alarm),
            state=state,
            priority=alarm.priority,
            raised_at=alarm.raised_at,
            first_index=alarm.first_index,
            last_index=alarm.last_index,
            acknowledged_by=alarm.acknowledged_by,
            acknowledged_at=alarm.acknowledged_at,
            reason=alarm.reason,
            note=alarm.note,
            shelved_until=alarm.shelved_until if state == AlarmState.SHELVED else None,
            reaction_plan=self.policy.reaction_plan(alarm),
            reasons=self.policy.reasons_for(alarm.characteristic),
            signals=alarm.signals,
            episodes=alarm.episodes,
            counts=rule_summary(alarm),
            active=alarm.active,
            below_lsl=alarm.below_lsl,
            above_usl=alarm.above_usl,
        )

    def views(self, alarms: Iterable[StoredAlarm], now: float | None = None) -> list[AlarmView]:
        """Views of `alarms`, most urgent first."""
        now = time.time() if now is None else now
        return [self.view(a, now) for a in ranked(alarms, now)]

    def list_record(self, alarm: StoredAlarm, now: float | None = None) -> dict[str, Any]:
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
            "shelved_until": iso_time(alarm.shelved_until) if state == AlarmState.SHELVED
            else None,
            "signals": alarm.signals,
            "episodes": alarm.episodes,
            "rules": alarm.rule_counts,
            "below_lsl": alarm.below_lsl,
            "above_usl": alarm.above_usl,
            "escalated_at": iso_time(alarm.escalated_at),
        }
        return record

    def hook_payload(self, alarm: StoredAlarm, now: float | None = None) -> dict[str, Any]:
        """What the alarm hook receives on stdin: the list record plus words and the plan."""
        return {
            **self.list_record(alarm, now),
            "description": self.describe(alarm),
            "reaction_plan": self.policy.reaction_plan(alarm),
            "file": alarm.file,
            "detail": alarm.detail,
        }
