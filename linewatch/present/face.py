"""What the screen talks to: a `SnapshotSource` and `LineActions` over one `Monitor`.

Snapshots are built from the store on the caller's thread (the screen's worker threads) with a
connection of its own, so the screen never waits for the collector's transaction and never
touches its engines. A store that is busy or gone is told as a `StoreError` in one line, the
kind of failure a face expects and shows; anything else is a bug and propagates."""

from __future__ import annotations

import contextlib
import sqlite3
import threading
import time
from collections.abc import Callable, Iterator

from linewatch.config.model import CharacteristicConfig
from linewatch.domain.errors import StoreError
from linewatch.pipeline.monitor import Monitor
from linewatch.present.view import CharacteristicView, LineSnapshot
from linewatch.store.actor import Actor


@contextlib.contextmanager
def _store_errors() -> Iterator[None]:
    """A database error (locked past the busy timeout, disk full, file gone) as a StoreError."""
    try:
        yield
    except sqlite3.Error as exc:
        raise StoreError(f"{type(exc).__name__}: {exc}") from exc


class MonitorFace:
    """A `SnapshotSource` and `LineActions` over one Monitor, safe to call from any thread.
    `actor`: who acts through it (a browser's signed-in user); None: this process's user."""

    def __init__(self, monitor: Monitor, actor: Actor | None = None) -> None:
        from linewatch.alarms.book import AlarmBook
        from linewatch.runtime.statedir import open_store

        self.monitor = monitor
        self.actor = actor
        self.store = open_store(monitor.state_dir, create=True,
                                shared_group=monitor.config.monitor.shared_group)
        self.store.audit.use_key(monitor.store.audit.key)  # sign actions as the monitor does
        self.alarms = AlarmBook(self.store, monitor.config)
        self._lock = threading.Lock()

    def _characteristics(self) -> list[CharacteristicConfig]:
        return self.monitor.characteristics.including(
            self.store.history.characteristics_with_points)

    # -- SnapshotSource --
    def snapshot(self) -> LineSnapshot:
        from linewatch.present.snapshot import build_snapshot

        with self._lock, _store_errors():
            snap = build_snapshot(
                self.store, self.alarms, self._characteristics(), role=self.monitor.role,
                title=self.monitor.title, version=self.monitor.version,
                stale_after=self.monitor.config.monitor.stale_after,
            )
        snap.catching_up = self.monitor.catching_up
        snap.problem = self.monitor.problem
        with self._lock, _store_errors():
            self._plant_link(snap)
        return snap

    def _plant_link(self, snap: LineSnapshot) -> None:
        """The link's state as the forwarding thread last recorded it, with the entries
        still waiting (counted only while it is down)."""
        from linewatch.pipeline.plant_link import read_link
        from linewatch.store.outbox import Outbox

        state = read_link(self.store)
        if state is not None and state.state == "down":
            snap.plant_down_since = state.since
            snap.plant_waiting = Outbox(self.store).waiting()

    def detail(self, characteristic: str) -> CharacteristicView | None:
        from linewatch.present.snapshot import DETAIL_POINTS, characteristic_view

        with self._lock, _store_errors():
            for c in self._characteristics():
                if c.name == characteristic:
                    return characteristic_view(
                        self.store, self.alarms, c, time.time(), points=DETAIL_POINTS,
                        detail=True, stale_after=self.monitor.config.monitor.stale_after)
        return None

    def subscribe(self, callback: Callable[[int], None]) -> None:
        self.monitor.subscribe(callback)

    # -- LineActions --
    def acknowledge(self, alarm_ids: list[int], reason: str, note: str = "") -> None:
        with self._lock, _store_errors():
            self.alarms.acknowledge(alarm_ids, reason, note, actor=self.actor)
        self.monitor.poke()

    def acknowledge_characteristic(self, characteristic: str, reason: str, note: str = "") -> int:
        with self._lock, _store_errors():
            n = self.alarms.acknowledge_characteristic(characteristic, reason, note,
                                                    actor=self.actor)
        self.monitor.poke()
        return n

    def shelve(self, alarm_id: int, seconds: float, reason: str) -> None:
        with self._lock, _store_errors():
            self.alarms.shelve(alarm_id, seconds, reason, actor=self.actor)
        self.monitor.poke()

    def unshelve(self, alarm_id: int) -> None:
        with self._lock, _store_errors():
            self.alarms.unshelve(alarm_id, actor=self.actor)
        self.monitor.poke()

    def new_baseline(self, characteristic: str, start_index: int, reason: str) -> None:
        with _store_errors():
            self.monitor.new_baseline(characteristic, start_index, reason,
                                      actor=None if self.actor is None else str(self.actor))

    def close(self) -> None:
        self.store.close()
