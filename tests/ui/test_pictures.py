"""Snapshot pictures of the main views at 80x24 and 160x48 (fixed data, fixed clock, UTC)."""

from __future__ import annotations

import pytest
from textual.pilot import Pilot

from .conftest import make_app

SIZES = [(80, 24), (160, 48)]


async def _settle(pilot: Pilot[int]) -> None:
    await pilot.pause()
    await pilot.wait_for_scheduled_animations()
    await pilot.pause()


@pytest.mark.parametrize("size", SIZES, ids=["80x24", "160x48"])
def test_board(snap_compare: object, size: tuple[int, int]) -> None:
    assert snap_compare(make_app(), terminal_size=size, run_before=_settle)  # type: ignore[operator]


@pytest.mark.parametrize("size", SIZES, ids=["80x24", "160x48"])
def test_alarm_queue(snap_compare: object, size: tuple[int, int]) -> None:
    assert snap_compare(make_app(), press=["a"], terminal_size=size,  # type: ignore[operator]
                        run_before=_settle)


@pytest.mark.parametrize("size", SIZES, ids=["80x24", "160x48"])
def test_close_up(snap_compare: object, size: tuple[int, int]) -> None:
    # the second row, wall-thickness, has two phases of limits and a run-rule signal
    assert snap_compare(make_app(), press=["down", "enter"],  # type: ignore[operator]
                        terminal_size=size, run_before=_settle)


def test_acknowledge_panel(snap_compare: object) -> None:
    assert snap_compare(make_app(), press=["a", "enter", "2"],  # type: ignore[operator]
                        run_before=_settle)


def test_feed_pulse(snap_compare: object) -> None:
    assert snap_compare(make_app(), press=["f", "down", "down"],  # type: ignore[operator]
                        run_before=_settle)


def test_board_in_ascii_for_the_linux_console(snap_compare: object) -> None:
    assert snap_compare(make_app(ascii_only=True), run_before=_settle)  # type: ignore[operator]
