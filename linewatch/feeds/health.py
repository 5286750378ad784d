"""Feed health: files that stopped delivering rows and gauges stuck on one value.

A feed is stale when no row arrived for `stale_after` seconds; rows arriving again resume it.
A characteristic is stuck when its gauge repeats exactly the same value `stuck_repeats` times in
a row (common practice: a frozen sensor looks like a perfectly stable process); a different
value frees it; 0 turns the check off. `tick` reports each transition exactly once, as
FeedEvents: `stale` / `resumed` (file = the log file) and `stuck` / `unstuck` (file = the
characteristic's name, detail says so).

Time stamps are kept as written, but each file's are counted when they go backwards (earlier
than the row before) or cannot be read as a time (ISO 8601 date and time, a time of day, or
seconds since 1970); `times` events report the counts, at once the first time and then at most
once a minute per file while they grow. The rows are kept either way.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import datetime, time

import numpy as np

from linewatch.domain.records import FeedEvent
from linewatch.domain.words import count


@dataclass(slots=True)
class _FileHealth:
    last_row: float
    stale: bool = False


@dataclass(slots=True)
class _Times:
    last: float | None = None
    backwards: int = 0
    unreadable: int = 0
    reported: tuple[int, int] = (0, 0)
    reported_at: float | None = None


_EPOCH = datetime(1970, 1, 1)
TIMES_EVERY = 60.0  # seconds between two `times` events of one file while the counts grow


def time_key(text: str) -> float | None:
    """Seconds for ordering a time stamp (ISO 8601 date-time, time of day, or epoch seconds);
    None when it cannot be read as a time."""
    try:
        v = float(text)
    except ValueError:
        pass
    else:
        return v if math.isfinite(v) else None
    try:
        dt = datetime.fromisoformat(text)
    except ValueError:
        try:
            t = time.fromisoformat(text)
        except ValueError:
            return None
        return t.hour * 3600 + t.minute * 60 + t.second + t.microsecond / 1e6
    if dt.tzinfo is not None:
        return dt.timestamp()
    return (dt - _EPOCH).total_seconds()  # naive: as written, no local-time guess


def times_text(backwards: int, unreadable: int) -> str:
    """The counts in words (feed events and the feeds view)."""
    return (f"time stamps: {backwards:,} earlier than the row before, {unreadable:,} not "
            "readable as a time (rows kept)")


@dataclass(slots=True)
class _Gauge:
    last: float | None = None
    run: int = 0
    stuck: bool = False


def _show(v: float) -> str:
    return f"{v:.12g}"


class FeedHealth:
    """Tracks arrivals per file and repeats per characteristic; `tick` says what changed."""

    def __init__(self, stale_after: float, stuck_repeats: int) -> None:
        self.stale_after = stale_after
        self.stuck_repeats = stuck_repeats
        self._files: dict[str, _FileHealth] = {}
        self._gauges: dict[str, _Gauge] = {}
        self._times: dict[str, _Times] = {}
        self._pending: list[FeedEvent] = []

    # -- arrivals ---------------------------------------------------------------------------

    def rows_arrived(self, file: str, n: int, now: float) -> None:
        """`n` good rows came from `file` (n = 0 just starts watching the file's clock)."""
        f = self._files.get(file)
        if f is None:
            f = self._files[file] = _FileHealth(last_row=now)
        if n <= 0:
            return
        f.last_row = now
        if f.stale:
            f.stale = False
            self._pending.append(FeedEvent("resumed", file, count(n, "new row")))

    def file_event(self, event: FeedEvent, now: float) -> None:
        """Start a file's clock when the tailer reports it, so a file that never delivers a
        row still goes stale."""
        if event.kind in ("appeared", "waiting") and event.file not in self._files:
            self._files[event.file] = _FileHealth(last_row=now)

    def times_arrived(self, file: str, times: Sequence[str | None],
                      start: tuple[int, int] = (0, 0)) -> None:
        """The time stamps of the next rows of `file`, in file order (None: the row has none).
        `start` gives counts kept from before (a restart)."""
        t = self._times.get(file)
        if t is None:
            t = self._times[file] = _Times(backwards=start[0], unreadable=start[1],
                                           reported=start)
        last = t.last
        for text in times:
            if text is None:
                continue
            key = time_key(text)
            if key is None:
                t.unreadable += 1
                continue
            if last is not None and key < last:
                t.backwards += 1
            last = key
        t.last = last

    def time_counts(self, file: str) -> tuple[int, int]:
        """(went backwards, not readable) so far for `file`."""
        t = self._times.get(file)
        return (0, 0) if t is None else (t.backwards, t.unreadable)

    def values_arrived(self, characteristic: str, values: Iterable[float]) -> None:
        """The next values of one characteristic, in order."""
        if self.stuck_repeats <= 0:
            return
        arr = np.asarray(values, dtype=np.float64)
        if arr.size == 0:
            return
        g = self._gauges.setdefault(characteristic, _Gauge())
        # runs of equal consecutive values inside this chunk
        cuts = np.flatnonzero(arr[1:] != arr[:-1]) + 1
        starts = np.concatenate(([0], cuts))
        lengths = np.diff(np.concatenate((starts, [arr.size])))
        for start, length in zip(starts.tolist(), lengths.tolist(), strict=True):
            value = float(arr[start])
            if g.last is not None and value == g.last:
                g.run += length
            else:
                if g.stuck:
                    g.stuck = False
                    self._pending.append(FeedEvent(
                        "unstuck", characteristic,
                        f"characteristic {characteristic}: value changed to {_show(value)}",
                    ))
                g.last, g.run = value, length
            if not g.stuck and g.run >= self.stuck_repeats:
                g.stuck = True
                self._pending.append(FeedEvent(
                    "stuck", characteristic,
                    f"characteristic {characteristic}: the same value {_show(value)} "
                    f"{g.run} times in a row",
                ))

    # -- reporting --------------------------------------------------------------------------

    def tick(self, now: float) -> list[FeedEvent]:
        """Transitions since the last tick, in the order they happened."""
        events, self._pending = self._pending, []
        for file, t in self._times.items():
            counts = (t.backwards, t.unreadable)
            if counts != t.reported and (t.reported_at is None
                                         or now - t.reported_at >= TIMES_EVERY):
                t.reported, t.reported_at = counts, now
                events.append(FeedEvent("times", file, times_text(*counts)))
        if self.stale_after > 0:
            for file, f in self._files.items():
                if not f.stale and now - f.last_row >= self.stale_after:
                    f.stale = True
                    events.append(FeedEvent(
                        "stale", file, f"no new row for {now - f.last_row:.0f} s"
                    ))
        return events

    @property
    def stale(self) -> list[str]:
        """Files stale now."""
        return [file for file, f in self._files.items() if f.stale]

    @property
    def stuck(self) -> list[str]:
        """Characteristics stuck now."""
        return [c for c, g in self._gauges.items() if g.stuck]
