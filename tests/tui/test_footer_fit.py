"""The footer fits on one line at 80 columns on every view and never loses the keys help."""

from __future__ import annotations

import io

import pytest
from rich.console import Console
from textual.widgets import Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.board import BoardScreen
from linewatch.faces.tui.screens.close_up import CloseUpScreen
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.keys_help import key_display, key_sections
from linewatch.faces.tui.screens.queue import AlarmQueueScreen
from linewatch.faces.tui.widgets.key_footer import KeyCap, fit_keys

from .conftest import make_app

VIEWS = [
    ((), BoardScreen),
    (("a",), AlarmQueueScreen),
    (("f",), FeedScreen),
    (("down", "enter"), CloseUpScreen),
]


def footer_keys(app: LinewatchApp) -> list[KeyCap]:
    return list(app.screen.query(KeyCap))


@pytest.mark.parametrize("ascii_only", [False, True], ids=["unicode", "ascii"])
@pytest.mark.parametrize(("keys", "screen"), VIEWS, ids=["board", "queue", "feeds", "close-up"])
async def test_every_footer_key_lies_inside_80_columns(
    keys: tuple[str, ...], screen: type, ascii_only: bool
) -> None:
    app = make_app(ascii_only=ascii_only)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press(*keys)
        await pilot.pause()
        await pilot.pause()
        assert isinstance(app.screen, screen)
        shown = footer_keys(app)
        assert shown
        assert all(k.region.width > 0 and k.region.right <= 80 for k in shown), [
            (k.key, k.region) for k in shown]
        assert {"question_mark", "q"} <= {k.key for k in shown}


async def test_the_key_of_the_view_you_are_on_is_left_out_but_leads_back_from_a_close_up(
    app: LinewatchApp,
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert "b" not in {k.key for k in footer_keys(app)}
        await pilot.press("down", "enter")
        await pilot.pause()
        assert isinstance(app.screen, CloseUpScreen)
        assert "b" in {k.key for k in footer_keys(app)}
        await pilot.press("b")  # the board itself, not the close-up laid over it
        await pilot.pause()
        assert isinstance(app.screen, BoardScreen)


async def test_a_wide_terminal_shows_every_key_of_the_queue_with_normal_spacing(
    app: LinewatchApp,
) -> None:
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.press("a")
        await pilot.pause()
        shown = {k.key for k in footer_keys(app)}
        wanted = {b.key for where, bindings in key_sections()
                  if where in ("everywhere", "alarm queue") for b in bindings
                  if b.show and b.action != "show('alarms')"}
        assert wanted <= shown | {"enter"}  # Enter shows once, from the table


async def test_keys_dropped_from_a_narrow_footer_are_still_in_the_keys_help(
    app: LinewatchApp,
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        await pilot.pause()
        shown = {k.key for k in footer_keys(app)}
        await pilot.press("question_mark")
        await pilot.pause()
        console = Console(width=200, file=io.StringIO(), color_system=None)
        console.print(app.screen.query_one("#help-text", Static).content)
        help_text = console.file.getvalue()  # type: ignore[attr-defined]
    queue_keys = next(b for where, b in key_sections() if where == "alarm queue")
    dropped = [b for b in queue_keys if b.show and b.key not in shown]
    assert dropped  # at 80 columns something had to go...
    for b in dropped:  # ...and the help still explains it
        assert f"  {key_display(b)}  " in help_text and (b.tooltip or b.description) in help_text


def test_fit_keys_keeps_help_and_quit_however_narrow() -> None:
    from textual.binding import Binding

    keys = [(Binding(k, a, d), k) for k, a, d in (
        ("x", "one", "First thing"), ("y", "two", "Second thing"),
        ("question_mark", "keys_help", "Keys"), ("q", "leave", "Quit"))]
    chosen, compact = fit_keys(keys, 20, None)
    assert compact
    assert [b.action for b, _ in chosen] == ["keys_help", "leave"]
    chosen, compact = fit_keys(keys, 200, None)
    assert not compact and len(chosen) == 4
