"""The alarm book of one state directory: the one object the monitor, the commands, the report
and the read model hold. It only wires the parts together and delegates to them:

- `policy`: priorities, acknowledgement reasons, reaction plans, shelving and flood limits;
- `lifecycle`: the episode definition applied to what the monitor observes (raise, extend,
  escalate, re-raise, return, feed health, monitoring stopped);
- `flood`: floods of annunciated alarms;
- `actions`: what people do (acknowledge, shelve, unshelve);
- `listing` and `wording`: alarms as views, list records, hook payloads and words.

Hooks run only after the commit, by the caller (see `linewatch.alarms.hooks`), on the "raised"
events these methods return.
"""

from __future__ import annotations

import time
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from linewatch.alarms.actions import OperatorActions
from linewatch.alarms.flood import Flood, FloodWatch
from linewatch.alarms.lifecycle import AlarmEvent, Lifecycle
from linewatch.alarms.listing import AlarmListing, ranked
from linewatch.alarms.policy import AlarmPolicy
from linewatch.domain.records import AlarmView, FeedEvent
from linewatch.engine.episodes import DEFAULT_CLEAR_AFTER
from linewatch.store.actor import Actor

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.alarm_rows import StoredAlarm
    from linewatch.store.db import Store


class AlarmBook:
    """The alarms of one state directory; pure logic over `Store`."""

    def __init__(self, store: Store, config: Config | None = None) -> None:
        self.store = store
        self.policy = AlarmPolicy(config, store.history.settings)
        self.lifecycle = Lifecycle(store, self.policy)
        self.floods = FloodWatch(store, self.policy)
        self.actions = OperatorActions(store, self.policy, self.lifecycle)
        self.listing = AlarmListing(self.policy)

    @property
    def config(self) -> Config | None:
        """The config in force (None for shell commands run without one)."""
        return self.policy.config

    def load_config(self, config: Config, now: float | None = None) -> None:
        """Adopt `config`: remember its characteristics' settings and audit it with its hash."""
        now = time.time() if now is None else now
        self.policy.config = config
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

    # -- what the monitor observes (lifecycle) ------------------------------------------------

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
        """See `Lifecycle.observe_chart`."""
        return self.lifecycle.observe_chart(characteristic, chart, first_index, last_index,
                                            fired, now, clear_after)

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
        """See `Lifecycle.observe_spec`."""
        return self.lifecycle.observe_spec(characteristic, first_index, values, lsl, usl, now,
                                           clear_after)

    def observe_feed(
        self, event: FeedEvent, now: float | None = None, characteristic: str | None = None
    ) -> list[AlarmEvent]:
        """See `Lifecycle.observe_feed`."""
        return self.lifecycle.observe_feed(event, now, characteristic)

    def monitoring_failed(self, reason: str, now: float | None = None) -> list[AlarmEvent]:
        """See `Lifecycle.monitoring_failed`."""
        return self.lifecycle.monitoring_failed(reason, now)

    def monitoring_resumed(self, now: float | None = None) -> list[AlarmEvent]:
        """See `Lifecycle.monitoring_resumed`."""
        return self.lifecycle.monitoring_resumed(now)

    def tick(self, now: float | None = None) -> list[AlarmEvent]:
        """See `Lifecycle.tick`."""
        return self.lifecycle.tick(now)

    def check_flood(self, now: float | None = None) -> list[AlarmEvent]:
        """See `FloodWatch.check`."""
        return self.floods.check(now)

    def flood(self) -> Flood | None:
        """The flood going on now (as the collector last judged it), or None."""
        return self.floods.current()

    def flood_window(self) -> float:
        """Seconds over which annunciated alarms are counted for a flood."""
        return self.policy.flood_window()

    # -- what people do (actions) -------------------------------------------------------------

    def acknowledge(
        self,
        alarm_ids: Sequence[int],
        reason: str,
        note: str = "",
        now: float | None = None,
        actor: Actor | None = None,
    ) -> list[AlarmEvent]:
        """See `OperatorActions.acknowledge`."""
        return self.actions.acknowledge(alarm_ids, reason, note, now, actor)

    def acknowledge_characteristic(
        self,
        characteristic: str,
        reason: str,
        note: str = "",
        now: float | None = None,
        actor: Actor | None = None,
    ) -> int:
        """See `OperatorActions.acknowledge_characteristic`."""
        return self.actions.acknowledge_characteristic(characteristic, reason, note, now, actor)

    def shelve(
        self,
        alarm_id: int,
        seconds: float,
        reason: str,
        now: float | None = None,
        actor: Actor | None = None,
    ) -> list[AlarmEvent]:
        """See `OperatorActions.shelve`."""
        return self.actions.shelve(alarm_id, seconds, reason, now, actor)

    def shelve_characteristic(
        self,
        characteristic: str,
        seconds: float,
        reason: str,
        now: float | None = None,
        actor: Actor | None = None,
    ) -> int:
        """See `OperatorActions.shelve_characteristic`."""
        return self.actions.shelve_characteristic(characteristic, seconds, reason, now, actor)

    def unshelve(
        self, alarm_id: int, now: float | None = None, actor: Actor | None = None
    ) -> list[AlarmEvent]:
        """See `OperatorActions.unshelve`."""
        return self.actions.unshelve(alarm_id, now, actor)

    # -- reading (listing, wording, policy) ---------------------------------------------------

    def known_characteristics(self) -> list[str]:
        """Every characteristic the config or the store knows, and every file with an alarm
        (what `--characteristic` may name), sorted."""
        config = self.config
        names = {c.name for c in config.characteristics} if config else set()
        names.update(str(r[0]) for r in self.store.query("SELECT name FROM characteristics"))
        names.update(str(r[0]) for r in self.store.query(
            "SELECT DISTINCT characteristic FROM alarms"))  # files too: their feed alarms
        return sorted(names)

    def alarms(self, include_closed: bool = False) -> list[StoredAlarm]:
        """Open alarms (or all), oldest first."""
        return self.store.alarms.all() if include_closed else self.store.alarms.open()

    def ranked(self, include_closed: bool = False, now: float | None = None) -> list[StoredAlarm]:
        """Open alarms (or all), most urgent first: the order of the queue and `alarms list`."""
        now = time.time() if now is None else now
        return ranked(self.alarms(include_closed), now)

    def view(self, alarm: StoredAlarm, now: float | None = None) -> AlarmView:
        """What the faces show for one alarm."""
        return self.listing.view(alarm, now)

    def views(self, include_closed: bool = False, now: float | None = None) -> list[AlarmView]:
        """Alarm views, most urgent first."""
        return self.listing.views(self.alarms(include_closed), now)

    def list_record(self, alarm: StoredAlarm, now: float | None = None) -> dict[str, Any]:
        """One alarm with exactly the keys of `alarms list --format jsonl`."""
        return self.listing.list_record(alarm, now)

    def hook_payload(self, alarm: StoredAlarm, now: float | None = None) -> dict[str, Any]:
        """What the alarm hook receives on stdin."""
        return self.listing.hook_payload(alarm, now)

    def describe(self, alarm: StoredAlarm) -> str:
        """The alarm's condition in plain words."""
        return self.listing.describe(alarm)

    def reaction_plan(self, alarm: StoredAlarm) -> str:
        """The configured text telling the operator what to do about this alarm."""
        return self.policy.reaction_plan(alarm)
