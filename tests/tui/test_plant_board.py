"""The plant board on a fixed source of invented lines (hostile names among them): rows drawn
literally, notifications in a burst redraw at most ten times a second, Enter tells what it
cannot do yet."""

from __future__ import annotations

import asyncio
import threading
import time
from collections.abc import Callable
from typing import Any

from textual.widgets import DataTable

from linewatch.faces.tui.plant_board import PlantBoardApp

HOSTILE = ["[bold red]x", "line\u001b]0;PWNED\u0007", "[/]"]


def record(name: str, waiting: dict[str, int] | None = None) -> dict[str, Any]:
    waiting = waiting or {}
    return {"type": "plant-line", "line": name, "host": "pc", "glyph": "▲" if waiting else "✓",
            "state": "alarm" if waiting else "ok", "waiting": waiting, "acknowledged": 0,
            "shelved": 0, "most_urgent": {"alarm": 1, "priority": 2, "characteristic": "[/]",
                                          "kind": "beyond-limits", "chart": "x", "rule": "we1",
                                          "raised_at": 0.0, "active": True}
            if waiting else None, "flood": None, "stale_feeds": 0, "link": "up",
            "last_contact": 0.0, "entries_waiting": 0, "newest_data_age": 3.0}


class FakePlant:
    def __init__(self, lines: list[dict[str, Any]]) -> None:
        self.records = lines
        self.reads = 0
        self.callback: Callable[[], None] | None = None

    def lines(self) -> list[dict[str, Any]]:
        self.reads += 1
        return self.records

    def subscribe(self, callback: Callable[[], None]) -> None:
        self.callback = callback


def plant() -> FakePlant:
    names = [f"line-{i:02d}" for i in range(27)] + HOSTILE
    return FakePlant([record(n, {"2": 1} if n in HOSTILE else None) for n in names])


async def test_hostile_line_names_are_drawn_literally() -> None:
    source = plant()
    app = PlantBoardApp(source)
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.pause(0.3)
        table = app.query_one(DataTable)
        assert table.row_count == 30
        shown = [str(table.get_row_at(i)[1]) for i in range(30)]
        assert "[bold red]x" in shown and "[/]" in shown
        assert "line\\x1b]0;PWNED\\x07" in shown  # escaped, never obeyed


async def test_a_burst_of_notifications_redraws_at_most_ten_times_a_second() -> None:
    source = plant()
    app = PlantBoardApp(source)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        before = app.redraws
        started = time.perf_counter()
        assert source.callback is not None
        stop = threading.Event()

        def burst() -> None:  # the listener thread: a notification every millisecond
            while not stop.is_set():
                source.callback()  # type: ignore[misc]
                stop.wait(0.001)

        thread = threading.Thread(target=burst)
        thread.start()
        await asyncio.sleep(1.0)
        stop.set()
        thread.join()
        await pilot.pause(0.3)
        elapsed = time.perf_counter() - started
        # 10 a second over the time it took (the first may come at once), however slow the machine
        assert 1 <= app.redraws - before <= int(elapsed * 10) + 1


async def test_enter_says_the_line_board_is_opened_on_the_line_pc() -> None:
    app = PlantBoardApp(plant())
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        await pilot.press("enter")
        await pilot.pause(0.1)
        assert any("line-00" in str(n.message) for n in app._notifications)
