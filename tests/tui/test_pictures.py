"""Snapshot pictures of the main views at 80x24 and 160x48 (fixed data, fixed clock, UTC)."""

from __future__ import annotations

from collections.abc import Awaitable, Callable
from typing import Any

import pytest
from textual.pilot import Pilot
from textual.screen import Screen

from linewatch.faces.tui.screens.ack_panel import AckPanel
from linewatch.faces.tui.screens.board import BoardScreen
from linewatch.faces.tui.screens.close_up import CloseUpScreen
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.queue import AlarmQueueScreen

from .conftest import make_app

SIZES = [(80, 24), (160, 48)]
SnapCompare = Callable[..., bool]


def showing(screen: type[Screen[Any]], *keys: str) -> Callable[[Pilot[Any]], Awaitable[None]]:
    """Press `keys`, wait until the app is quiet, and make sure it shows `screen` (a crash would
    otherwise leave an empty picture that an update could accept)."""

    async def settle(pilot: Pilot[Any]) -> None:
        await pilot.press(*keys)
        await pilot.pause()
        await pilot.wait_for_scheduled_animations()
        await pilot.pause()
        assert isinstance(pilot.app.screen, screen), pilot.app.screen

    return settle


@pytest.mark.parametrize("size", SIZES, ids=["80x24", "160x48"])
def test_board(snap_compare: SnapCompare, size: tuple[int, int]) -> None:
    assert snap_compare(make_app(), terminal_size=size, run_before=showing(BoardScreen))


@pytest.mark.parametrize("size", SIZES, ids=["80x24", "160x48"])
def test_alarm_queue(snap_compare: SnapCompare, size: tuple[int, int]) -> None:
    assert snap_compare(make_app(), terminal_size=size,
                        run_before=showing(AlarmQueueScreen, "a"))


@pytest.mark.parametrize("size", SIZES, ids=["80x24", "160x48"])
def test_close_up(snap_compare: SnapCompare, size: tuple[int, int]) -> None:
    # the second row, wall-thickness, has two phases of limits and a run-rule signal
    assert snap_compare(make_app(), terminal_size=size,
                        run_before=showing(CloseUpScreen, "down", "enter"))


def test_acknowledge_panel(snap_compare: SnapCompare) -> None:
    assert snap_compare(make_app(), run_before=showing(AckPanel, "a", "enter", "2"))


def test_feed_pulse(snap_compare: SnapCompare) -> None:
    assert snap_compare(make_app(), run_before=showing(FeedScreen, "f", "down", "down"))


def test_board_in_ascii_for_the_linux_console(snap_compare: SnapCompare) -> None:
    assert snap_compare(make_app(ascii_only=True), run_before=showing(BoardScreen))
