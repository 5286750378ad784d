"""Benchmark of the screen under load and at rest.

Run on demand: python tests/benchmarks/bench_ui.py

200 characteristics each receive 10 points a second (a new snapshot every 100 ms, notified from a
background thread like the monitor does). Reported: how long a keypress takes to show its effect
(cursor moved on the board, p50/p95 over 40 presses), redraws taken, and the CPU used by an idle
screen over 3 seconds. Headless (Textual's test driver), 160x48.
"""

from __future__ import annotations

import asyncio
import math
import statistics
import threading
import time

from textual import events

from linewatch.faces.tui.app import LinewatchApp
from linewatch.present import view

CHARACTERISTICS = 200
POINTS_SHOWN = 120
PUBLISH_EVERY = 0.1  # seconds: 10 points a second per characteristic


def picture(version: int) -> view.LineSnapshot:
    """A synthetic line at `version`: smooth waves, a signal now and then."""
    chars = []
    for c in range(CHARACTERISTICS):
        start = version
        values = [10.0 + math.sin((start + i) * 0.3 + c) for i in range(POINTS_SHOWN)]
        rules = ["we1" if (start + i) % 97 == c % 97 else "" for i in range(POINTS_SHOWN)]
        loc = view.ChartView("individuals", values, list(range(start, start + POINTS_SHOWN)),
                             rules, 10.0, 13.0, 7.0, 1.0, [0])
        chars.append(view.CharacteristicView(
            name=f"char-{c:03d}", unit="mm", state=view.STATE_OK, last_value=values[-1],
            last_row_age=0.1, lsl=4.0, usl=16.0, points=start + POINTS_SHOWN, location=loc,
            recent_mean=10.0, recent_sigma=1.0, margin_sigma=6.0, cpk=2.0, cpk_lower95=1.8))
    return view.LineSnapshot(version=version, title="bench", characteristics=chars)


class Source:
    """A SnapshotSource whose picture a background thread replaces."""

    def __init__(self) -> None:
        self.picture = picture(1)
        self.callbacks: list = []
        self.taken = 0

    def snapshot(self) -> view.LineSnapshot:
        self.taken += 1
        return self.picture

    def detail(self, characteristic: str) -> view.CharacteristicView | None:
        return next((c for c in self.picture.characteristics if c.name == characteristic), None)

    def subscribe(self, callback) -> None:
        self.callbacks.append(callback)

    def run(self, stop: threading.Event) -> None:
        version = 1
        while not stop.wait(PUBLISH_EVERY):
            version += 1
            self.picture = picture(version)
            for cb in self.callbacks:
                cb(version)


class Actions:
    def acknowledge(self, *a, **k) -> None: ...
    def acknowledge_characteristic(self, *a, **k) -> int: return 0
    def shelve(self, *a, **k) -> None: ...
    def unshelve(self, *a, **k) -> None: ...
    def new_baseline(self, *a, **k) -> None: ...


async def main() -> None:
    source = Source()
    app = LinewatchApp(source, Actions(), bell=False, ascii_only=False)
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.pause()
        table = app.screen.query_one("#board-table")
        stop = threading.Event()
        publisher = threading.Thread(target=source.run, args=(stop,), daemon=True)
        publisher.start()
        await asyncio.sleep(1.0)
        latencies = []
        taken_before = source.taken
        t_load = time.perf_counter()
        for i in range(40):
            key = "down" if i < 20 else "up"
            before = table.cursor_row
            t0 = time.perf_counter()
            app.post_message(events.Key(key, None))  # as the terminal driver delivers a key
            while table.cursor_row == before:
                await asyncio.sleep(0.001)
            latencies.append((time.perf_counter() - t0) * 1000)
            await asyncio.sleep(0.05)
        load_seconds = time.perf_counter() - t_load
        redraws = source.taken - taken_before
        stop.set()
        publisher.join()
        await asyncio.sleep(0.5)
        cpu0, wall0 = time.process_time(), time.perf_counter()
        await asyncio.sleep(3.0)
        idle_cpu = (time.process_time() - cpu0) / (time.perf_counter() - wall0)
    latencies.sort()
    print(f"characteristics: {CHARACTERISTICS}, new snapshot every {PUBLISH_EVERY * 1000:.0f} ms")
    print(f"keypress to effect under load: p50 {statistics.median(latencies):.1f} ms, "
          f"p95 {latencies[int(0.95 * len(latencies)) - 1]:.1f} ms, max {latencies[-1]:.1f} ms")
    print(f"redraws under load: {redraws} in {load_seconds:.1f} s "
          f"({redraws / load_seconds:.1f} per second)")
    print(f"idle screen CPU: {idle_cpu * 100:.2f}% of one core")


if __name__ == "__main__":
    asyncio.run(main())
