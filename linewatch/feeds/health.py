"""Feed health: files that stopped delivering rows and gauges stuck on one value.

A feed is stale when no row arrived for `stale_after` seconds; rows arriving again resume it.
A characteristic is stuck when its gauge repeats exactly the same value `stuck_repeats` times in
a row (common practice: a frozen sensor looks like a perfectly stable process); a different
value frees it; 0 turns the check off. `tick` reports each transition exactly once, as
FeedEvents: `stale` / `resumed` (file = the log file) and `stuck` / `unstuck` (file = the
characteristic's name, detail says so).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from linewatch.model import FeedEvent
from linewatch.words import count


@dataclass(slots=True)
class _FileHealth:
    last_row: float
    stale: bool = False


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
