"""Benchmark of opening the alarm queue with many alarms.

Run on demand: python tests/benchmarks/bench_ui_queue.py [--profile] [alarms ...]

The line holds 10, 10,000 and 30,000 alarms (invented: mixed kinds, priorities and states).
Every figure is key to frame: from the moment the terminal driver delivers the key until the
first frame showing its effect is ready to write to the terminal (the compositor's update
turned into escape sequences, as a real terminal gets them). Headless (Textual's test driver),
160x48, median of 5. Reported per count:

- first opening: `a` on the board of a freshly started screen;
- opening again: back on the board, a new snapshot arrives meanwhile, then `a` (the queue
  must redraw the new picture);
- page-down in the open queue, and the redraw of the open queue when a new snapshot arrives
  (notified from the snapshot source, as the monitor does; the screen takes it on its next
  refresh tick, up to 100 ms later).

`--profile` prints a cProfile of one first opening at the largest count.
"""

from __future__ import annotations

import asyncio
import cProfile
import gc
import pstats
import statistics
import sys
import time
from collections.abc import Callable

from textual import events
from textual.screen import Screen

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.board import BoardScreen
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
    """A SnapshotSource over a picture the benchmark replaces."""

    def __init__(self, picture: view.LineSnapshot) -> None:
        self.picture = picture
        self.callback: Callable[[int], None] = lambda version: None

    def snapshot(self) -> view.LineSnapshot:
        return self.picture

    def detail(self, characteristic: str) -> None:
        return None

    def subscribe(self, callback: Callable[[int], None]) -> None:
        self.callback = callback

    def publish(self, picture: view.LineSnapshot) -> None:
        self.picture = picture
        self.callback(picture.version)


class Actions:
    def acknowledge(self, *a, **k) -> None: ...
    def acknowledge_characteristic(self, *a, **k) -> int: return 0
    def shelve(self, *a, **k) -> None: ...
    def unshelve(self, *a, **k) -> None: ...
    def new_baseline(self, *a, **k) -> None: ...


class Frames:
    """Watches the frames the app hands to its driver; `next` waits for the first frame of a
    screen that passes a test, made into escape sequences as a terminal would be sent."""

    def __init__(self, app: LinewatchApp) -> None:
        self.app = app
        self.wanted: Callable[[Screen[object]], bool] | None = None
        self.seen = asyncio.Event()
        self.at = 0.0
        shown = app._display

        def display(screen: Screen[object], renderable: object) -> None:
            held = app._batch_count > 0  # an update held back (a mode switch holds 50 ms)
            shown(screen, renderable)  # type: ignore[arg-type]
            if held or renderable is None or self.wanted is None or not self.wanted(screen):
                return
            render = getattr(renderable, "render_segments", None)
            if render is not None:
                render(app.console)
            self.at = time.perf_counter()
            self.wanted = None
            self.seen.set()

        app._display = display  # type: ignore[method-assign]

    async def after(self, act: Callable[[], object],
                    wanted: Callable[[Screen[object]], bool]) -> float:
        """Seconds from `act` to the first frame of a screen passing `wanted`."""
        self.seen.clear()
        self.wanted = wanted
        t0 = time.perf_counter()
        act()
        await asyncio.wait_for(self.seen.wait(), 30)
        return self.at - t0


def key(app: LinewatchApp, name: str) -> Callable[[], None]:
    """Deliver a key as the terminal driver does."""
    def send() -> None:
        event = events.Key(name, name if len(name) == 1 else None)
        event.set_sender(app)
        assert app._driver is not None
        app._driver.send_message(event)
    return send


def queue_with_rows(screen: Screen[object]) -> bool:
    return isinstance(screen, AlarmQueueScreen) and screen.ready and screen.table.row_count > 0


async def settle() -> None:
    """Let earlier work (first frames, the queue built in the background, timers) finish and
    collect the garbage it left, so a timing holds neither (the pictures of 30,000 alarms the
    benchmark builds make a full collection take 100-250 ms here)."""
    await asyncio.sleep(0.6)
    gc.collect()
    await asyncio.sleep(0.1)


async def once(n: int, profile: cProfile.Profile | None = None) -> tuple[float, ...]:
    source = Source(line_with_alarms(n))
    app = LinewatchApp(source, Actions(), bell=False, ascii_only=False)
    async with app.run_test(size=(160, 48)):
        frames = Frames(app)
        await settle()
        if profile:
            profile.enable()
        first = await frames.after(key(app, "a"), queue_with_rows)
        if profile:
            profile.disable()
        await settle()
        await frames.after(key(app, "b"), lambda s: isinstance(s, BoardScreen))
        source.publish(line_with_alarms(n, version=2))
        third = line_with_alarms(n, version=3)  # built before the clock starts
        await settle()
        again = await frames.after(
            key(app, "a"),
            lambda s: queue_with_rows(s) and getattr(s, "drawn_version", 0) == 2)
        await settle()
        paged = await frames.after(key(app, "pagedown"), queue_with_rows)
        await settle()
        redrawn = await frames.after(
            lambda: source.publish(third),
            lambda s: queue_with_rows(s) and getattr(s, "drawn_version", 0) == 3)
    return first, again, paged, redrawn


async def main(counts: list[int], profile: bool) -> None:
    for n in counts:
        runs = [await once(n) for _ in range(5)]
        med = [statistics.median(r[k] for r in runs) * 1000 for k in range(4)]
        spread = [(min(r[k] for r in runs) * 1000, max(r[k] for r in runs) * 1000)
                  for k in range(4)]
        words = ["first opening", "opening again", "page-down", "redraw on a new snapshot"]
        print(f"{n:>6} alarms, key to frame, median (min-max) of {len(runs)}:")
        for w, m, (lo, hi) in zip(words, med, spread, strict=True):
            print(f"    {w:<26} {m:6.0f} ms ({lo:.0f}-{hi:.0f})")
    if profile:
        p = cProfile.Profile()
        await once(max(counts), p)
        pstats.Stats(p).sort_stats("cumulative").print_stats(40)


if __name__ == "__main__":
    args = sys.argv[1:]
    asyncio.run(main([int(a) for a in args if a != "--profile"] or [10, 10_000, 30_000],
                     "--profile" in args))
