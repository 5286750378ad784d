"""Key flows of the board, close-up, filter, keys help and quitting, driven with Pilot."""

from __future__ import annotations

import dataclasses
import io

from rich.console import Console
from textual.widgets import DataTable, Input, Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.ack_panel import AckPanel
from linewatch.faces.tui.screens.board import BoardScreen
from linewatch.faces.tui.screens.close_up import CloseUpScreen
from linewatch.faces.tui.screens.confirm_leave import ConfirmLeave
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.keys_help import KeysHelp
from linewatch.faces.tui.screens.restart_panel import RestartPanel

from .fake_line import FakeActions, FakeSource, build_snapshot
from .waiting import settled, until


def board_rows(app: LinewatchApp) -> list[str]:
    table = app.screen.query_one("#board-table", DataTable)
    return [str(key.value) for key in table.rows]


async def test_enter_opens_the_close_up_of_the_highlighted_row_and_escape_returns(
    app: LinewatchApp,
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter")
        await settled(pilot)
        assert isinstance(app.screen, CloseUpScreen)
        assert app.screen.characteristic == "wall-thickness"
        await pilot.press("escape")
        assert isinstance(app.screen, BoardScreen)


async def test_new_baseline_at_the_cursor_point_with_a_reason(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter")
        await settled(pilot)
        screen = app.screen
        assert isinstance(screen, CloseUpScreen)
        # the cursor starts on the newest point (index 89 of 90), three steps left is 86
        await pilot.press("left", "left", "left")
        cursor_line = str(screen.query_one("#closeup-cursor", Static).render())
        assert "point 86 =" in cursor_line
        await pilot.press("n")
        assert isinstance(app.screen, RestartPanel)
        await pilot.press(*"new die fitted", "enter")
        await settled(pilot)
        assert actions.calls == [("new_baseline", ("wall-thickness", 86, "new die fitted"))]


async def test_new_baseline_point_can_be_typed_and_is_checked(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter", "n")
        panel = app.screen
        assert isinstance(panel, RestartPanel)
        panel.query_one("#restart-at", Input).value = "480"
        await pilot.press(*"lot change", "enter")
        await settled(pilot)
        assert actions.calls == []
        assert "between 0 and 47" in str(panel.query_one("#restart-hint", Static).render())
        panel.query_one("#restart-at", Input).value = "40"
        await pilot.press("enter", "enter")  # fixed point, on to the kept reason, confirm
        await settled(pilot)
        assert actions.calls == [("new_baseline", ("outer-diameter", 40, "lot change"))]


async def test_alarm_queue_opens_the_close_up_at_the_alarm(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "c")
        await settled(pilot)
        screen = app.screen
        assert isinstance(screen, CloseUpScreen)
        assert screen.characteristic == "outer-diameter"
        assert "subgroup 47 =" in str(screen.query_one("#closeup-cursor", Static).render())


async def test_filter_by_name_then_clear(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        assert len(board_rows(app)) == 6
        await pilot.press("slash", *"wall")
        await settled(pilot)
        assert board_rows(app) == ["wall-thickness"]
        await pilot.press("enter")
        await settled(pilot)
        assert board_rows(app) == ["wall-thickness"]
        await pilot.press("enter")
        await settled(pilot)
        assert isinstance(app.screen, CloseUpScreen)
        await pilot.press("escape", "escape")
        await settled(pilot)
        assert len(board_rows(app)) == 6


async def test_attention_switch_keeps_alarm_watch_and_stale_rows(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("exclamation_mark")
        await settled(pilot)
        assert board_rows(app) == ["outer-diameter", "wall-thickness", "fill-weight"]
        await pilot.press("exclamation_mark")
        await settled(pilot)
        assert len(board_rows(app)) == 6


async def test_keys_help_lists_the_keys_and_the_thresholds(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("question_mark")
        assert isinstance(app.screen, KeysHelp)
        console = Console(width=100, file=io.StringIO(), color_system=None)
        console.print(app.screen.query_one("#help-text", Static).content)
        text = console.file.getvalue()  # type: ignore[attr-defined]
        for phrase in ("acknowledge the highlighted alarm", "shelve", "new phase", "Ctrl+Q",
                       "1.00", "1.33", "common practice", "name contains",
                       "scroll down to the box plot"):
            assert phrase in text
        await pilot.press("escape")
        assert isinstance(app.screen, BoardScreen)


async def test_feed_pulse_shows_the_last_rejected_rows(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f")
        assert isinstance(app.screen, FeedScreen)
        await pilot.press("down", "down")
        await settled(pilot)
        rejects = str(app.screen.query_one("#feed-rejects", Static).render())
        assert "line 871: weight is not a number" in rejects


async def test_quit_asks_nothing_when_no_acknowledgement_is_open(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "q")
        await settled(pilot)
    assert app.return_code == 0


async def test_quit_asks_when_an_acknowledgement_is_half_typed(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "enter", "1", *"half")
        await pilot.press("ctrl+q")
        assert isinstance(app.screen, ConfirmLeave)
        await pilot.press("n")
        assert isinstance(app.screen, AckPanel)
        assert app.screen.query_one("#ack-note", Input).value == "half"
        await pilot.press("ctrl+q", "y")
        await settled(pilot)
    assert app.return_code == 0
    assert actions.calls == []


async def test_a_requested_new_phase_is_announced_until_its_limits_arrive(
    app: LinewatchApp, source: FakeSource
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter")
        await settled(pilot)
        screen = app.screen
        assert isinstance(screen, CloseUpScreen)
        await pilot.press("left", "n", *"new die fitted", "enter")
        await settled(pilot)
        cursor = screen.query_one("#closeup-cursor", Static)
        assert "new phase from point 88 asked for" in str(cursor.render())
        # the collector has estimated the new phase's limits: a third phase appears
        picture = build_snapshot()
        wall = picture.characteristics[1]
        assert wall.location is not None
        wall.location.phase_limits.append((88, 2.2, 2.29, 2.11, 0.03))
        source.publish(dataclasses.replace(picture, version=2))
        await until(lambda: "asked for" not in str(cursor.render()))


async def test_home_and_end_move_the_close_up_cursor_to_the_first_and_newest_points(
    app: LinewatchApp,
) -> None:
    wall = build_snapshot().characteristics[1]
    assert wall.location is not None
    first, newest = wall.location.indices[0], wall.location.indices[-1]
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter", "home")
        await settled(pilot)
        cursor = app.screen.query_one("#closeup-cursor", Static)
        assert f"point {first} =" in str(cursor.render())
        await pilot.press("end")
        await settled(pilot)
        assert f"point {newest} =" in str(cursor.render())


async def test_pgdn_is_offered_for_the_figures_only_when_they_sit_below_the_charts() -> None:
    from linewatch.faces.tui.widgets.key_footer import KeyCap

    from .conftest import make_app

    for size, offered in (((80, 24), True), ((160, 48), False)):
        app = make_app()
        async with app.run_test(size=size) as pilot:
            await pilot.press("down", "enter")
            await settled(pilot)
            await settled(pilot)
            keys = {k.key for k in app.screen.query(KeyCap)}
            assert ("pagedown" in keys) is offered, (size, keys)


async def test_the_board_row_says_learning_while_a_new_phase_s_limits_are_being_learned(
    app: LinewatchApp, source: FakeSource
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await settled(pilot)
        table = app.screen.query_one("#board-table", DataTable)
        assert "learning" not in str(table.get_cell("ovality", "state"))
        picture = build_snapshot()
        ovality = next(cv for cv in picture.characteristics if cv.name == "ovality")
        assert ovality.open_alarms == 0  # the row's second line is free for the phase
        ovality.pending_phase_start = 64
        source.publish(dataclasses.replace(picture, version=2))
        await until(lambda: "learning" in str(table.get_cell("ovality", "state")))
