"""Pace a generated stream of actions onto real files, the way gauges append to their logs.

Simulated time runs `speed` times faster than wall time; rows stamped before the start (the
history) are written at once. Each row is one unbuffered write() (rarely two, to leave a partial
line for a moment), so a follower sees it immediately. Stops after `duration` wall seconds or
when `stop` is set, always at a row boundary, and closes every file.
"""

from __future__ import annotations

import os
import threading
import time
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from pathlib import Path
from typing import BinaryIO

from linewatch.simulation.line import (
    EXTRUSION_LINE,
    Action,
    Header,
    Note,
    Rotate,
    Row,
    Scenario,
    latest_stamp,
)

PARTIAL_PAUSE = 0.03  # seconds between the two pieces of a split row


@dataclass(slots=True)
class WriteStats:
    """What a run wrote: good and junk rows per file, rotations, wall seconds."""

    rows: dict[str, int] = field(default_factory=dict)
    junk: dict[str, int] = field(default_factory=dict)
    rotations: int = 0
    split_rows: int = 0
    seconds: float = 0.0


class LogFiles:
    """Open-on-demand append handles for the logs in one folder, with rename rotation."""

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.handles: dict[str, BinaryIO] = {}

    def write(self, name: str, data: bytes) -> None:
        handle = self.handles.get(name)
        if handle is None:
            handle = open(self.folder / name, "ab", buffering=0)  # noqa: SIM115 - kept open
            self.handles[name] = handle
        handle.write(data)

    def rotate(self, name: str) -> None:
        """Rename `name` to `name.1` (an older `.1` becomes `.2`); the next write starts anew."""
        handle = self.handles.pop(name, None)
        if handle is not None:
            handle.close()
        path = self.folder / name
        older = self.folder / f"{name}.1"
        if older.exists():
            os.replace(older, self.folder / f"{name}.2")
        if path.exists():
            os.replace(path, older)

    def close(self) -> None:
        for handle in self.handles.values():
            handle.close()
        self.handles.clear()


def write_feeds(
    folder: Path,
    actions: Iterable[Action],
    *,
    speed: float = 1.0,
    duration: float | None = None,
    stop: threading.Event | None = None,
    on_note: Callable[[Note], None] | None = None,
    clock: Callable[[], float] = time.monotonic,
) -> WriteStats:
    """Write `actions` into `folder` at `speed`; return what was written.

    A split row's second piece follows `PARTIAL_PAUSE` later, or sooner when the next action is
    due, so partial lines never hold back the pace (at high speeds there are many of them)."""
    if not speed > 0:
        raise ValueError("speed must be more than 0")
    stop = stop or threading.Event()
    folder.mkdir(parents=True, exist_ok=True)
    files = LogFiles(folder)
    stats = WriteStats()
    began = clock()
    rest: _Rest | None = None  # the unwritten second piece of a split row
    try:
        for action in actions:
            due = max(0.0, action.t / speed)
            if duration is not None and due >= duration:
                _finish(files, rest, stop, 0.0, began, clock)  # the last row, complete now
                rest = None
                remaining = duration - (clock() - began)
                if remaining > 0:
                    stop.wait(remaining)
                break
            if rest is not None:
                _finish(files, rest, stop, min(rest.at, due), began, clock)
                rest = None
            wait = due - (clock() - began)
            if wait > 0 and stop.wait(wait):
                break
            if stop.is_set():
                break
            rest = _apply(files, action, stats, on_note, clock() - began)
    finally:
        if rest is not None:  # rows always end complete
            files.write(rest.file, rest.data)
        files.close()
        stats.seconds = clock() - began
    return stats


@dataclass(frozen=True, slots=True)
class _Rest:
    """The second piece of a split row, to be written at `at` (seconds into the run)."""

    file: str
    data: bytes
    at: float


def _finish(
    files: LogFiles, rest: _Rest | None, stop: threading.Event, at: float, began: float,
    clock: Callable[[], float],
) -> None:
    """Write `rest` at `at` seconds into the run (at once when stopping)."""
    if rest is None:
        return
    wait = at - (clock() - began)
    if wait > 0:
        stop.wait(wait)
    files.write(rest.file, rest.data)


def _apply(
    files: LogFiles, action: Action, stats: WriteStats, on_note: Callable[[Note], None] | None,
    now: float,
) -> _Rest | None:
    """Carry out one action; a split row returns its second piece, still to be written."""
    rest = None
    if isinstance(action, Row):
        if action.split:
            files.write(action.file, action.data[: action.split])
            rest = _Rest(action.file, action.data[action.split :], now + PARTIAL_PAUSE)
            stats.split_rows += 1
        else:
            files.write(action.file, action.data)
        tally = stats.rows if action.value is not None else stats.junk
        tally[action.file] = tally.get(action.file, 0) + 1
    elif isinstance(action, Header):
        if action.data:
            files.write(action.file, action.data)
    elif isinstance(action, Rotate):
        files.rotate(action.file)
        stats.rotations += 1
    elif isinstance(action, Note) and on_note is not None:
        on_note(action)
    return rest

def existing_logs(folder: Path, scenario: Scenario = EXTRUSION_LINE) -> list[Path]:
    """The scenario's logs that `folder` already holds (a run then continues them)."""
    return [folder / g.file for g in scenario.gauges if (folder / g.file).exists()]


def continue_after(logs: list[Path]) -> datetime | None:
    """A time just after the newest row of `logs`: a continued run stamps its first live row no
    earlier, so no log's time stamps go backwards, even after an earlier run went ahead of the
    clock (speed > 1). None when no row of theirs carries a time stamp."""
    stamps = [t for t in (_tail_stamp(p) for p in logs) if t is not None]
    return max(stamps) + timedelta(seconds=1) if stamps else None


def _tail_stamp(path: Path) -> datetime | None:
    """The newest time stamp among the last rows of a log written by the simulator."""
    with path.open("rb") as fh:
        fh.seek(0, 2)
        fh.seek(max(0, fh.tell() - 4096))
        tail = fh.read().decode("utf-8", errors="replace")
    return latest_stamp(tail)
