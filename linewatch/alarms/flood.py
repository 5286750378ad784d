"""Alarm floods: more alarms annunciated in the flood window than an operator can handle.

The collector judges it (`check`) and remembers the flood going on in the store, so every face
and a viewer in another process see the same one (`current`); its start and end are audited.
"""

from __future__ import annotations

import json
import time
from dataclasses import dataclass
from typing import TYPE_CHECKING

from linewatch.alarms.lifecycle import SYSTEM_ACTOR, AlarmEvent
from linewatch.alarms.policy import AlarmPolicy

if TYPE_CHECKING:
    from linewatch.store.db import Store

FLOOD_KEY = "alarm_flood"  # meta: the flood going on now (JSON), '' when none


@dataclass(frozen=True, slots=True)
class Flood:
    """More alarms annunciated in the flood window than an operator can handle."""

    since: float
    count: int  # alarms raised or re-raised in the last flood window
    peak: int


class FloodWatch:
    """Counts annunciated alarms against the policy's flood threshold."""

    def __init__(self, store: Store, policy: AlarmPolicy) -> None:
        self.store = store
        self.policy = policy

    def check(self, now: float | None = None) -> list[AlarmEvent]:
        """Compare the alarms annunciated in the last flood window with the flood threshold;
        the start and end of a flood are audited and remembered in the store (`current()`)."""
        now = time.time() if now is None else now
        window = self.policy.flood_window()
        limit = self.policy.flood_limit()
        events: list[AlarmEvent] = []
        with self.store.transaction():
            count = self.store.alarms.raised_since(now - window)
            state = self.current()
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

    def current(self) -> Flood | None:
        """The flood going on now (as the collector last judged it), or None."""
        raw = self.store.meta.get(FLOOD_KEY)
        if not raw:
            return None
        d = json.loads(raw)
        return Flood(float(d["since"]), int(d["count"]), int(d.get("peak", d["count"])))
