"""`Monitor`: the one object the commands and faces hold per process — the pipeline feeds ->
engine -> alarms -> store, collecting or viewing one state directory.

It opens the store, sets up the audit key and anchors and the alarm book, and hands the work to
its parts: `plan.py` (what is charted, discovery), `collector.py` (a poll or a beat in one
transaction), `roles.py` (the collector/viewer loop, lease, back-off) and `announce.py` (records
and alarm hooks after each commit). Faces get records (dicts in the jsonl format of `check`,
plus feed/alarm records) through `emit`, and are told of changes through `subscribe`.
"""

from __future__ import annotations

import contextlib
import os
import threading
import time
import uuid
from collections.abc import Callable
from pathlib import Path
from typing import TYPE_CHECKING

from linewatch.pipeline.announce import Announcer, Emit
from linewatch.pipeline.plan import Characteristics
from linewatch.pipeline.roles import RoleLoop

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig
    from linewatch.pipeline.plan import WatchPlan
    from linewatch.pipeline.plant_link import PlantLink
    from linewatch.store.anchors import Anchorer


class Monitor:
    """Collector or viewer of one state directory."""

    def __init__(self, plan: WatchPlan, state_dir: Path, *, emit: Emit | None = None,
                 poll_seconds: float | None = None, clock: Callable[[], float] = time.time):
        from linewatch.alarms.book import AlarmBook
        from linewatch.runtime.statedir import open_store
        from linewatch.store.lease import Lease

        self.plan = plan
        self.config = plan.config
        self.state_dir = Path(state_dir)
        self.store = open_store(self.state_dir, create=True,
                                shared_group=plan.config.monitor.shared_group)
        anchorer = self._configure_audit()
        self.alarms = AlarmBook(self.store, plan.config)
        self.characteristics = Characteristics(plan)
        self.announcer = Announcer(self.store, self.alarms, plan.config.alarms, emit)
        self.instance = f"{os.getpid()}-{uuid.uuid4().hex[:8]}"
        self._listeners: list[Callable[[int], None]] = []
        self._disarm_when_collecting = False
        self._version = 0
        self.loop = RoleLoop(
            self.store, self.alarms, plan, self.characteristics, self.announcer,
            Lease(self.store, self.instance), anchorer=anchorer,
            poll_seconds=(poll_seconds if poll_seconds is not None
                          else plan.config.monitor.poll_seconds),
            clock=clock, changed=self._changed,
        )
        self.alarms.load_config(plan.config)
        self.plant_link = self._plant_link()

    def _plant_link(self) -> PlantLink | None:
        """The forwarding thread when the config (or LINEWATCH_PLANT_URL) names a central
        database: the outbox is armed here, before anything is collected, so every commit
        from now on is entered. Without a plant link an armed outbox is disarmed when this
        instance becomes the collector (its rows would only pile up; joining again sends the
        whole store)."""
        from linewatch.domain.errors import ConfigError
        from linewatch.pipeline.plant_link import PlantLink
        from linewatch.plant.url import plant_url
        from linewatch.store.outbox import Outbox

        url = plant_url(self.config.plant.url)
        outbox = Outbox(self.store)
        if url is None:
            # disarmed only once this instance collects: a viewer opened without the config
            # must not stop the collector's forwarding
            self._disarm_when_collecting = outbox.armed()
            return None
        if not self.config.plant.line:
            raise ConfigError(self.config.source or "(config)", "plant.line",
                              "a line forwarding to the plant needs its name there "
                              "(e.g. line = \"line-3\")")
        outbox.arm()
        return PlantLink(self.state_dir, self.config, url, self.config.plant.line,
                         audit_key=self.store.audit.key,
                         is_collector=lambda: self.loop.role == "collector",
                         changed=self._changed, emit=lambda r: self.announcer.emit(r))

    def _configure_audit(self) -> Anchorer | None:
        """The audit key and anchor file of the config (the store is closed on a bad one)."""
        from linewatch.store.anchors import configure_audit

        try:
            return configure_audit(self.store, self.config.monitor, self.config.source)
        except BaseException:
            self.store.close()
            raise

    # -- what the faces read --
    @property
    def emit(self) -> Emit:
        """Where records go (the headless printer, or the screen's message list)."""
        return self.announcer.emit

    @emit.setter
    def emit(self, emit: Emit) -> None:
        self.announcer.emit = emit

    @property
    def title(self) -> str:
        if self.plan.title:
            return f"linewatch · {self.plan.title}"
        src = Path(self.config.source) if self.config.source else None
        if src is None:
            return "linewatch"
        name = src.stem if src.stem != "linewatch" else src.resolve().parent.name
        return f"linewatch · {name}"

    @property
    def char_configs(self) -> dict[str, CharacteristicConfig]:
        """The characteristics charted so far (declared, or discovered in the data)."""
        return self.characteristics.configs

    @property
    def role(self) -> str:
        """"collector" or "viewer"."""
        return self.loop.role

    @property
    def counts(self) -> dict[str, int]:
        """Good values read per characteristic by this instance (this run)."""
        return self.loop.counts

    @property
    def rejected(self) -> int:
        """Rows this instance rejected or could not read (this run)."""
        return self.loop.rejected

    @property
    def failures(self) -> int:
        """Failed passes in a row (0 while all is well)."""
        return self.loop.failures

    @property
    def problem(self) -> str:
        """The last failure while the collector keeps failing, else ''."""
        return self.loop.problem

    @property
    def catching_up(self) -> float | None:
        """The fraction of the files' history read, while behind; else None."""
        return self.loop.catching_up

    @property
    def version(self) -> int:
        """Grows with every change the faces should redraw for."""
        return self._version

    def poke(self) -> None:
        """Something changed outside the loop (an acknowledgement): tell the faces now."""
        self._changed()

    def subscribe(self, callback: Callable[[int], None]) -> None:
        """`callback(version)` is called from the monitor thread after every change."""
        self._listeners.append(callback)

    def _changed(self) -> None:
        if self._disarm_when_collecting and self.loop.role == "collector":
            import sqlite3

            from linewatch.store.outbox import Outbox

            with contextlib.suppress(sqlite3.Error):  # tried again at the next change
                Outbox(self.store).disarm()
                self._disarm_when_collecting = False
        self._version += 1
        for cb in list(self._listeners):
            cb(self._version)

    # -- running --
    def run(self, stop: threading.Event) -> None:
        """Collect (or view) until `stop` is set, then close (see `roles.RoleLoop.run`)."""
        if self.plant_link is not None:
            self.plant_link.start()
        try:
            self.loop.run(stop)
        finally:
            if self.plant_link is not None:
                self.plant_link.stop()
            self.store.close()

    def close(self) -> None:
        """Wait for running hooks, give the lease up, close files and the store."""
        if self.plant_link is not None:
            self.plant_link.stop()
        self.loop.close()
        self.store.close()

    def new_baseline(self, characteristic: str, start_index: int, reason: str,
                     actor: str | None = None) -> None:
        """Start a new phase of limits (any instance may ask; the collector carries it out);
        `actor` asks (default: this process's user)."""
        self.store.requests.ask(characteristic, start_index, reason, actor=actor)
