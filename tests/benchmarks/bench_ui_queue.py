"""Benchmark of opening the alarm queue with many alarms.

Run on demand: python tests/benchmarks/bench_ui_queue.py [alarms ...]

The line holds 10,000 and 30,000 alarms (invented: mixed kinds, priorities and states). Reported
per count: the time from the key that opens the queue until its first rows are drawn (most of it
is the screen's own set-up, paid with 10 alarms too), the part of it that sorts the queue and
builds its rows, the time a page-down takes, and the time to redraw the open queue when a new
snapshot arrives. Headless
(Textual's test driver), 160x48; median of 5 openings.
"""

from __future__ import annotations

import asyncio
import statistics
import sys
import time

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.queue import AlarmQueueScreen
from linewatch.present import view

KINDS = ["out-of-spec", "beyond-limits", "run-rule", "feed-health"]
STATES = [view.UNACKNOWLEDGED, view.ACKNOWLEDGED, view.RETURNED_UNACKNOWLEDGED, view.SHELVED]


def line_with_alarms(n: int, version: int = 1) -> view.LineSnapshot:
    """A line with `n` alarms over 40 characteristics."""
    alarms = [
        view.AlarmView(
            id=i + 1, kind=KINDS[i % 4], characteristic=f"char-{i % 40:02d}", chart="xbar",
            rule="we2", description="2 of 3 points beyond 2 sigma on one side (xbar chart)",
            state=STATES[i % 4], priority=i % 3 + 1, raised_at=1.7e9 + i,
            first_index=i, last_index=i + 2, reaction_plan="check the gauge")
        for i in range(n)
    ]
    return view.LineSnapshot(version=version, title="bench", alarms=alarms)


class Source:
    """A SnapshotSource over a fixed picture."""

    def __init__(self, picture: view.LineSnapshot) -> None:
        self.picture = picture

    def snapshot(self) -> view.LineSnapshot:
        return self.picture

    def detail(self, characteristic: str) -> None:
        return None

    def subscribe(self, callback) -> None:
        self.callback = callback


class Actions:
    def acknowledge(self, *a, **k) -> None: ...
    def acknowledge_characteristic(self, *a, **k) -> int: return 0
    def shelve(self, *a, **k) -> None: ...
    def unshelve(self, *a, **k) -> None: ...
    def new_baseline(self, *a, **k) -> None: ...


async def once(n: int) -> tuple[float, float, float, float]:
    source = Source(line_with_alarms(n))
    app = LinewatchApp(source, Actions(), bell=False, ascii_only=False)
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.pause()
        t0 = time.perf_counter()
        await pilot.press("a")
        await pilot.pause()
        assert isinstance(app.screen, AlarmQueueScreen) and app.screen.table.row_count > 0
        opened = time.perf_counter() - t0
        t0 = time.perf_counter()
        app.screen.show_line()  # the queue's own part of opening: sort and build the rows
        built = time.perf_counter() - t0
        t0 = time.perf_counter()
        await pilot.press("pagedown")
        await pilot.pause()
        paged = time.perf_counter() - t0
        source.picture = line_with_alarms(n, version=2)
        t0 = time.perf_counter()
        source.callback(2)
        while app.screen.drawn_version != 2:
            await asyncio.sleep(0.001)
        await pilot.pause()
        redrawn = time.perf_counter() - t0
    return opened, built, paged, redrawn


async def main(counts: list[int]) -> None:
    for n in counts:
        runs = [await once(n) for _ in range(5)]
        med = [statistics.median(r[k] for r in runs) * 1000 for k in range(4)]
        print(f"{n:>6} alarms: queue opens in {med[0]:.0f} ms (its rows built in "
              f"{med[1]:.0f} ms), page-down {med[2]:.0f} ms, "
              f"redraw on a new snapshot {med[3]:.0f} ms")


if __name__ == "__main__":
    asyncio.run(main([int(a) for a in sys.argv[1:]] or [10_000, 30_000]))
