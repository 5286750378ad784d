"""The plant link of a collecting instance: a background thread that forwards the outbox to
the central database and carries out the requests left there for this line.

It has its own SQLite connection and its own PostgreSQL connection, and never holds the
collector's lock, so a slow or dead network never delays a poll: collection goes on and the
outbox grows. When the central database cannot be reached the thread retries with back-off
(0.5 s doubling to 8 s) and records the link as down (`meta` key `plant-link`, which every face
of the line reads through the read model); on reconnect it sends the backlog in order.
Only the instance holding the lease forwards; a viewer's thread waits.
"""

from __future__ import annotations

import contextlib
import json
import socket
import sqlite3
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import LinewatchError, PlantError
from linewatch.store.outbox import LINK_KEY

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.db import Store

IDLE_WAIT = 0.2  # seconds between looks at an empty outbox (a request wakes it at once)
FIRST_BACKOFF, MAX_BACKOFF = 0.5, 8.0
FLUSH_SECONDS = 3.0


@dataclass(frozen=True, slots=True)
class LinkState:
    """What the faces show: the link up or down since when, and why it is down."""

    state: str  # "up" | "down"
    since: float
    problem: str = ""


def read_link(store: Store) -> LinkState | None:
    """The link's state as last recorded (None: this line has no plant link, or it has not
    tried yet)."""
    raw = store.meta.get(LINK_KEY)
    if not raw:
        return None
    try:
        data = json.loads(raw)
        return LinkState(str(data["state"]), float(data["since"]), str(data.get("problem", "")))
    except (ValueError, KeyError, TypeError):
        return None


def link_backoff(failures: int) -> float:
    """Seconds before the `failures`-th retry in a row: 0.5, 1, 2, 4, 8, 8 ..."""
    return min(MAX_BACKOFF, FIRST_BACKOFF * 2.0 ** (failures - 1))


class PlantLink:
    """The forwarding thread of one line (`start`, `stop`)."""

    def __init__(self, state_dir: Path, config: Config, url: str, line: str, *,
                 audit_key: bytes | None, is_collector: Callable[[], bool],
                 changed: Callable[[], None], emit: Callable[[dict[str, Any]], None],
                 batch: int | None = None) -> None:
        self.state_dir = state_dir
        self.config = config
        self.url = url
        self.line = line
        self.audit_key = audit_key
        self.is_collector = is_collector
        self.changed = changed
        self.emit = emit
        self.batch = batch
        self.sent = 0  # entries sent by this run
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def start(self) -> None:
        self._thread = threading.Thread(target=self._run, name="plant-link", daemon=True)
        self._thread.start()

    def stop(self, timeout: float = 10.0) -> None:
        """Stop the thread (what is not sent stays in the outbox for the next run)."""
        self._stop.set()
        if self._thread is not None:
            self._thread.join(timeout)

    # -- the loop -------------------------------------------------------------------------

    def _run(self) -> None:
        from linewatch.alarms.book import AlarmBook
        from linewatch.plant.forward import BATCH, LineLink
        from linewatch.runtime.statedir import open_store

        store = open_store(self.state_dir, create=True,
                           shared_group=self.config.monitor.shared_group)
        try:
            store.audit.use_key(self.audit_key)  # requests' audit entries are signed too
            book = AlarmBook(store, self.config)
            link = LineLink(store, self.url, self.line, socket.gethostname(),
                            batch=self.batch or BATCH)
            self._loop(store, book, link)
        finally:
            store.close()

    def _loop(self, store: Store, book: Any, link: Any) -> None:
        from linewatch.pipeline.plant_requests import settle_waiting

        failures = 0
        state = read_link(store)
        if state is not None and state.state == "up":  # up as of an earlier run: not known yet
            state = None
        while not self._stop.is_set():
            if not self.is_collector():
                if link.is_open:
                    link.close()
                self._stop.wait(0.5)
                continue
            now = time.time()
            try:
                if not link.is_open:
                    link.open(now)
                    state = self._record(store, state, LinkState("up", now))
                sent = link.send(now)
                self.sent += sent
                if link.requests_due and settle_waiting(store, book, link):
                    self.changed()
                failures = 0
                if sent < link.batch:
                    link.wait(IDLE_WAIT)
            except PlantError as exc:
                with contextlib.suppress(sqlite3.Error):
                    link.confirm()  # what did arrive, before the link is counted as down
                link.close()
                failures += 1
                problem = str(exc)
                if state is None or state.state != "down" or state.problem != problem:
                    since = state.since if state is not None and state.state == "down" else now
                    state = self._record(store, state, LinkState("down", since, problem))
                self._stop.wait(link_backoff(failures))
            except (sqlite3.Error, LinewatchError) as exc:  # the line's own store: busy, full
                failures += 1
                self.emit({"type": "error", "problem": f"plant link: {exc}"})
                self._stop.wait(link_backoff(failures))
        self._flush(link)
        link.close()

    def _flush(self, link: Any) -> None:
        """On the way out, send what the last commits entered, for a few seconds at most
        (what is left waits in the outbox for the next run)."""
        deadline = time.monotonic() + FLUSH_SECONDS
        with contextlib.suppress(PlantError, sqlite3.Error, LinewatchError):
            while link.is_open and time.monotonic() < deadline:
                if not link.send(time.time()):
                    break
        with contextlib.suppress(sqlite3.Error):
            link.confirm()

    def _record(self, store: Store, old: LinkState | None, new: LinkState) -> LinkState:
        """Keep the link's state in the store (for every face) and tell the faces."""
        from linewatch.domain.clock import iso_time

        if old is not None and old.state == new.state and old.problem == new.problem:
            return old
        with contextlib.suppress(sqlite3.Error):  # the link itself matters more
            store.meta.set(LINK_KEY, json.dumps(
                {"state": new.state, "since": new.since, "problem": new.problem}))
        record: dict[str, Any] = {"type": "plant-link", "state": new.state,
                                  "since": iso_time(new.since), "line": self.line}
        if new.problem:
            record["problem"] = new.problem
        self.emit(record)
        self.changed()
        return new
