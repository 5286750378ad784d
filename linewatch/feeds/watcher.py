"""Wake the tailer when followed files may have changed, and never spin while nothing does.

File-system events (watchdog: inotify on Linux) on the folders of the patterns set a flag; a
folder that does not exist yet is watched through its nearest existing parent until it appears.
On network shares, where events never arrive, `poll_seconds > 0` wakes on a fixed beat instead.
Either way a slow re-check beat (`safety_seconds`) wakes the caller so a missed event costs at
most that long.
"""

from __future__ import annotations

import contextlib
import glob
import logging
import os
import threading
import time
from collections.abc import Sequence
from typing import Any

from linewatch.feeds.patterns import in_pseudo_fs

DEFAULT_SAFETY_SECONDS = 2.0

log = logging.getLogger(__name__)


def _target(pattern: str) -> tuple[str, bool]:
    """The folder to watch for `pattern` and whether changes below it matter too."""
    parts = os.path.abspath(os.path.expanduser(pattern)).split(os.sep)
    keep: list[str] = []
    for part in parts[:-1]:
        if glob.has_magic(part):
            return os.sep.join(keep) or os.sep, True
        keep.append(part)
    return os.sep.join(keep) or os.sep, "**" in parts[-1]


def _nearest_existing(folder: str) -> str:
    while not os.path.isdir(folder):
        parent = os.path.dirname(folder)
        if parent == folder:
            break
        folder = parent
    return folder


class Waker:
    """`wait(timeout)` returns when something may have changed, a beat is due, or on timeout."""

    def __init__(
        self,
        patterns: Sequence[str],
        poll_seconds: float = 0.0,
        safety_seconds: float = DEFAULT_SAFETY_SECONDS,
    ) -> None:
        self.patterns = list(patterns)
        self._event = threading.Event()
        self._lock = threading.Lock()
        self._refresh_due = True
        self._watches: dict[tuple[str, bool], Any] = {}
        self._refreshed = False
        self._observer: Any = None
        self.mode = "poll"
        if poll_seconds > 0:
            self.interval = poll_seconds
        else:
            self.interval = safety_seconds
            self._start_observer()
        self._next_beat = time.monotonic() + self.interval

    # -- events -----------------------------------------------------------------------------

    def _start_observer(self) -> None:
        try:
            from watchdog.events import (
                DirCreatedEvent,
                DirDeletedEvent,
                DirMovedEvent,
                FileAttribEvent,
                FileClosedEvent,
                FileCreatedEvent,
                FileDeletedEvent,
                FileModifiedEvent,
                FileMovedEvent,
                FileSystemEventHandler,
            )
            from watchdog.observers import Observer
        except ImportError:  # pragma: no cover - watchdog is a dependency
            log.warning("watchdog is missing: checking files every %.1f s", self.interval)
            return
        self._filter = [
            FileCreatedEvent, FileModifiedEvent, FileMovedEvent, FileDeletedEvent,
            FileClosedEvent, FileAttribEvent, DirCreatedEvent, DirMovedEvent, DirDeletedEvent,
        ]
        waker = self

        class _Handler(FileSystemEventHandler):
            def on_any_event(self, event: Any) -> None:
                if event.is_directory:
                    waker._refresh_due = True
                waker._event.set()

        self._handler = _Handler()
        observer = Observer(timeout=1.0)
        observer.daemon = True
        try:
            observer.start()
        except OSError as exc:
            log.warning("file-system events unavailable (%s): checking every %.1f s",
                        exc, self.interval)
            return
        self._observer = observer
        self.mode = "events"
        self._refresh()

    def _refresh(self) -> None:
        """Watch each pattern's folder, or its nearest existing parent until it exists."""
        if self._observer is None:
            return
        with self._lock:
            self._refresh_due = False
            wanted = self._wanted()
            # a deeper folder may appear before the watch on its parent starts (mkdir -p):
            # schedule, look again, until the nearest existing folders stop changing
            for _ in range(16):
                self._sync(wanted)
                again = self._wanted()
                if again == wanted:
                    break
                wanted = again

    def _wanted(self) -> set[tuple[str, bool]]:
        """Each pattern's folder, or its nearest existing parent, and whether to recurse."""
        wanted: set[tuple[str, bool]] = set()
        for pattern in self.patterns:
            folder, below = _target(pattern)
            existing = _nearest_existing(folder)
            below = below and existing == folder
            if in_pseudo_fs(existing) is not None or (below and existing == os.sep):
                # a recursive watch of / or of /proc, /sys, /dev would walk the machine (the
                # expansion of such patterns is bounded too): the re-check beat serves them
                continue
            wanted.add((existing, below))
        return wanted

    def _sync(self, wanted: set[tuple[str, bool]]) -> None:
        """Unschedule watches no longer wanted and schedule the new ones (lock held)."""
        assert self._observer is not None
        for key in list(self._watches):
            if key not in wanted or not os.path.isdir(key[0]):
                watch = self._watches.pop(key)
                with contextlib.suppress(KeyError, OSError, ValueError):
                    self._observer.unschedule(watch)
        first, self._refreshed = not self._refreshed, True
        for key in wanted - set(self._watches):
            folder, below = key
            try:
                self._watches[key] = self._observer.schedule(
                    self._handler, folder, recursive=below, event_filter=self._filter
                )
            except OSError as exc:
                log.warning("cannot watch %s (%s): relying on the re-check beat", folder, exc)
                continue
            if not first:
                # files may have arrived in the new folder before its watch began
                self._event.set()

    @property
    def watched(self) -> list[str]:
        """Folders watched for events now."""
        with self._lock:
            return sorted(folder for folder, _ in self._watches)

    # -- waiting ----------------------------------------------------------------------------

    def wait(self, timeout: float | None = None) -> bool:
        """Block until an event, the next beat or `timeout`; False only when timed out idle."""
        if self._refresh_due:
            self._refresh()
        now = time.monotonic()
        until_beat = max(0.0, self._next_beat - now)
        woke = self._event.wait(until_beat if timeout is None else min(timeout, until_beat))
        self._event.clear()
        now = time.monotonic()
        if now >= self._next_beat:
            self._next_beat = now + self.interval
            self._refresh_due = True
            return True
        if self._refresh_due:
            self._refresh()
        return woke

    def wake(self) -> None:
        """Let a waiting `wait` return now (shutdown, a new pattern)."""
        self._event.set()

    def close(self) -> None:
        """Stop the observer thread."""
        observer, self._observer = self._observer, None
        if observer is not None:
            observer.stop()
            observer.join(timeout=2.0)
        self._event.set()
