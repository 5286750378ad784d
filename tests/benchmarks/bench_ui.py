"""Benchmark of the screen under load and at rest.

Run on demand: python tests/benchmarks/bench_ui.py [picture|store ...]   (default: both)

200 characteristics each receive 10 points a second, in two set-ups:

- picture: a synthetic source whose picture a background thread replaces every 100 ms (the
  screen's own cost, no store);
- store: the real thing - a collector on a background thread follows a CSV log with 200
  columns that a writer appends 10 rows a second to, and the screen reads its pictures, close-up
  details and acknowledgements from the store through `MonitorFace`.

Reported: how long a keypress takes to show its effect (the board's cursor moved; 60 presses at
random gaps of 50-400 ms, p50/p95/max), in the store set-up also how long an acknowledgement
takes from its last key until the panel has closed and until the store holds it, the pictures
taken, and the CPU the process uses once nothing arrives (3 s; in the store set-up this
includes the idle collector). Headless (Textual's test driver), 160x48. The machine's load is
printed first: on a busy machine every figure is worse.
"""

from __future__ import annotations

import asyncio
import math
import os
import random
import statistics
import sys
import tempfile
import threading
import time
from collections.abc import Callable
from pathlib import Path

from textual import events

from linewatch.faces.tui.app import LinewatchApp
from linewatch.present import view

CHARACTERISTICS = 200
POINTS_SHOWN = 120
PUBLISH_EVERY = 0.1  # seconds: 10 points a second per characteristic
PRESSES = 60
GAPS = (0.05, 0.4)  # seconds between presses, drawn at random (seeded)


def picture(version: int) -> view.LineSnapshot:
    """A synthetic line at `version`: smooth waves, a signal now and then."""
    chars = []
    for c in range(CHARACTERISTICS):
        start = version
        values = [10.0 + math.sin((start + i) * 0.3 + c) for i in range(POINTS_SHOWN)]
        marks = ["B" if (start + i) % 97 == c % 97 else "" for i in range(POINTS_SHOWN)]
        loc = view.ChartView("individuals", values, list(range(start, start + POINTS_SHOWN)),
                             ["we1" if m else "" for m in marks], 10.0, 13.0, 7.0, 1.0, [0],
                             marks=marks)
        chars.append(view.CharacteristicView(
            name=f"char-{c:03d}", unit="mm", state=view.STATE_OK, last_value=values[-1],
            last_row_age=0.1, lsl=4.0, usl=16.0, points=start + POINTS_SHOWN, location=loc,
            recent_mean=10.0, recent_sigma=1.0, margin_sigma=6.0, cpk=2.0, cpk_lower95=1.8))
    return view.LineSnapshot(version=version, title="bench", characteristics=chars)


class PictureSource:
    """A SnapshotSource whose picture a background thread replaces (from pictures made before,
    so the figures are the screen's own cost, not the cost of making pictures)."""

    def __init__(self) -> None:
        self.pictures = [picture(v) for v in range(1, 51)]
        self.picture = self.pictures[0]
        self.callbacks: list[Callable[[int], None]] = []
        self.taken = 0

    def snapshot(self) -> view.LineSnapshot:
        self.taken += 1
        return self.picture

    def detail(self, characteristic: str) -> view.CharacteristicView | None:
        return next((c for c in self.picture.characteristics if c.name == characteristic), None)

    def subscribe(self, callback: Callable[[int], None]) -> None:
        self.callbacks.append(callback)

    def run(self, stop: threading.Event) -> None:
        version = 1
        while not stop.wait(PUBLISH_EVERY):
            version += 1
            made = self.pictures[version % len(self.pictures)]
            self.picture = view.LineSnapshot(version=version, title=made.title,
                                             characteristics=made.characteristics)
            for cb in self.callbacks:
                cb(version)


class Actions:
    def acknowledge(self, *a: object, **k: object) -> None: ...
    def acknowledge_characteristic(self, *a: object, **k: object) -> int: return 0
    def shelve(self, *a: object, **k: object) -> None: ...
    def unshelve(self, *a: object, **k: object) -> None: ...
    def new_baseline(self, *a: object, **k: object) -> None: ...


def percentiles(ms: list[float]) -> str:
    ms = sorted(ms)
    p95 = ms[max(0, math.ceil(0.95 * len(ms)) - 1)]
    return f"p50 {statistics.median(ms):.1f} ms, p95 {p95:.1f} ms, max {ms[-1]:.1f} ms"


async def keypresses(app: LinewatchApp) -> list[float]:
    """Milliseconds from a cursor key (delivered as the terminal driver delivers it) until the
    board's cursor has moved."""
    table = app.screen.query_one("#board-table")
    rng = random.Random(7)
    latencies = []
    for i in range(PRESSES):
        key = "down" if (i // 10) % 2 == 0 else "up"
        before = table.cursor_row  # type: ignore[attr-defined]
        t0 = time.perf_counter()
        app.post_message(events.Key(key, None))
        while table.cursor_row == before:  # type: ignore[attr-defined]
            await asyncio.sleep(0.0005)
        latencies.append((time.perf_counter() - t0) * 1000)
        await asyncio.sleep(rng.uniform(*GAPS))
    return latencies


async def idle_cpu(seconds: float = 3.0) -> float:
    cpu0, wall0 = time.process_time(), time.perf_counter()
    await asyncio.sleep(seconds)
    return (time.process_time() - cpu0) / (time.perf_counter() - wall0)


async def picture_mode() -> None:
    source = PictureSource()
    app = LinewatchApp(source, Actions(), bell=False, ascii_only=False)
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.pause()
        stop = threading.Event()
        publisher = threading.Thread(target=source.run, args=(stop,), daemon=True)
        publisher.start()
        await asyncio.sleep(1.0)
        taken_before, t_load = source.taken, time.perf_counter()
        latencies = await keypresses(app)
        load_seconds = time.perf_counter() - t_load
        taken = source.taken - taken_before
        taken_before, t_read = source.taken, time.perf_counter()
        await asyncio.sleep(3.0)  # nobody types: the pictures' own pace
        reading = (source.taken - taken_before) / (time.perf_counter() - t_read)
        stop.set()
        publisher.join()
        while app.line.version != source.picture.version:  # the last picture drawn
            await asyncio.sleep(0.1)
        await asyncio.sleep(0.5)
        idle = await idle_cpu()
    print(f"[picture] {CHARACTERISTICS} characteristics, a new picture every "
          f"{PUBLISH_EVERY * 1000:.0f} ms from a background thread")
    print(f"[picture] keypress to effect under load: {percentiles(latencies)}")
    print(f"[picture] pictures taken: {taken / load_seconds:.1f} per second while keys are "
          f"pressed, {reading:.1f} per second while nobody types")
    print(f"[picture] idle screen CPU: {idle * 100:.2f}% of one core")


def write_rows(log: Path, stop: threading.Event, start: int) -> None:
    """Append one row with every characteristic to `log` every PUBLISH_EVERY seconds."""
    rng = random.Random(11)
    k = start
    next_at = time.perf_counter()
    while not stop.is_set():
        with log.open("a") as f:
            f.write(row(k, rng))
        k += 1
        next_at += PUBLISH_EVERY
        stop.wait(max(0.0, next_at - time.perf_counter()))


def row(k: int, rng: random.Random) -> str:
    """Row `k`: every characteristic near 10 with σ 1, each one far out once every 80 rows."""
    values = ",".join(f"{10.0 + rng.gauss(0, 1) + (6.0 if (k + c) % 80 == 0 else 0.0):.3f}"
                      for c in range(CHARACTERISTICS))
    return f"{k},{values}\n"


async def store_mode() -> None:
    from linewatch.config.loading import parse_config
    from linewatch.pipeline.monitor import Monitor
    from linewatch.pipeline.plan import WatchPlan
    from linewatch.present.face import MonitorFace

    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "station.csv"
        rng = random.Random(3)
        header = "seq," + ",".join(f"c{c:03d}" for c in range(CHARACTERISTICS)) + "\n"
        log.write_text(header + "".join(row(k, rng) for k in range(300)))
        config = parse_config(f'[[feed]]\npaths = ["{log}"]\n')
        plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                         baseline=25)
        monitor = Monitor(plan, Path(tmp) / "state", poll_seconds=0.2)
        stop = threading.Event()
        collector = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
        collector.start()
        face = MonitorFace(monitor)
        while len(face.store.history.characteristics_with_points()) < CHARACTERISTICS or \
                not face.store.history.current_limits(f"c{CHARACTERISTICS - 1:03d}"):
            time.sleep(0.2)
        app = LinewatchApp(face, face, bell=False, ascii_only=False)
        writing = threading.Event()
        writer = threading.Thread(target=write_rows, args=(log, writing, 300), daemon=True)
        try:
            async with app.run_test(size=(160, 48)) as pilot:
                await pilot.pause()
                writer.start()
                await asyncio.sleep(2.0)
                versions_before, t_load = app.line.version, time.perf_counter()
                pictures = 0
                seen = app.line.version

                def count_pictures() -> None:
                    nonlocal pictures, seen
                    if app.line.version != seen:
                        pictures, seen = pictures + 1, app.line.version

                counter = app.set_interval(0.01, count_pictures)
                latencies = await keypresses(app)
                counter.stop()
                load_seconds = time.perf_counter() - t_load
                acks = await acknowledgements(app, Path(tmp) / "state")
                writing.set()
                writer.join()
                while True:  # until the collector rests and the screen has drawn its last word
                    version = monitor.version
                    await asyncio.sleep(1.0)
                    if monitor.version == version == app.line.version:
                        break
                idle = await idle_cpu()
            print(f"[store] {CHARACTERISTICS} characteristics in one CSV log, 10 rows a second, "
                  f"collector and screen in one process")
            print(f"[store] keypress to effect under load: {percentiles(latencies)}")
            panel_ms, stored_ms = zip(*acks, strict=True)
            print(f"[store] acknowledgement, last key to panel closed: "
                  f"{percentiles(list(panel_ms))}; to stored: {percentiles(list(stored_ms))}")
            print(f"[store] pictures drawn under load: {pictures / load_seconds:.1f} per second "
                  f"(line version {versions_before} -> {app.line.version})")
            print(f"[store] idle process CPU (screen and idle collector): "
                  f"{idle * 100:.2f}% of one core")
        finally:
            stop.set()
            collector.join(timeout=10)
            face.close()


def acknowledged(store: object, alarm_id: int) -> bool:
    """The store holds the acknowledgement (or the alarm has closed since)."""
    mine = [a for a in store.alarms.open() if a.id == alarm_id]  # type: ignore[attr-defined]
    return not mine or mine[0].acknowledged


async def acknowledgements(app: LinewatchApp, state_dir: Path) -> list[tuple[float, float]]:
    """Acknowledge open alarms from the queue: (ms until the panel closed, ms until stored).
    The bench reads the store with a connection of its own."""
    from linewatch.faces.tui.screens.ack_panel import AckPanel
    from linewatch.runtime.statedir import open_store

    store = open_store(state_dir, create=False)

    app.action_show("alarms")
    await asyncio.sleep(0.5)
    print(f"[store] alarms on screen: {len(app.line.alarms)}, unacknowledged: "
          f"{sum(1 for a in app.line.alarms if a.state == view.UNACKNOWLEDGED)}")
    out = []
    waiting = (view.UNACKNOWLEDGED, view.RETURNED_UNACKNOWLEDGED)
    for _ in range(40):
        if len(out) == 8:
            break
        queue = app.screen
        alarm = queue.highlighted()  # type: ignore[attr-defined]
        if alarm is None or alarm.state not in waiting:
            app.post_message(events.Key("down", None))
            await asyncio.sleep(0.2)
            continue
        app.post_message(events.Key("enter", None))
        while not isinstance(app.screen, AckPanel):
            await asyncio.sleep(0.001)
        app.post_message(events.Key("1", "1"))
        await asyncio.sleep(0.1)
        t0 = time.perf_counter()
        app.post_message(events.Key("enter", None))
        while isinstance(app.screen, AckPanel):
            await asyncio.sleep(0.0005)
        closed = (time.perf_counter() - t0) * 1000
        while not acknowledged(store, alarm.id):
            await asyncio.sleep(0.002)
        out.append((closed, (time.perf_counter() - t0) * 1000))
        await asyncio.sleep(0.3)
    store.close()
    if not out:
        out.append((float("nan"), float("nan")))
    return out


async def main(modes: list[str]) -> None:
    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
    if "picture" in modes:
        await picture_mode()
    if "store" in modes:
        await store_mode()


if __name__ == "__main__":
    asyncio.run(main(sys.argv[1:] or ["picture", "store"]))
