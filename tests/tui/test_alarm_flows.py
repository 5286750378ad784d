"""Key flows of the alarm queue, driven with Textual's Pilot against the recording fake actions."""

from __future__ import annotations

from textual.widgets import Input, Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.ack_panel import AckPanel
from linewatch.faces.tui.screens.queue import AlarmQueueScreen
from linewatch.faces.tui.screens.shelve_panel import ShelvePanel

from .fake_line import FakeActions
from .waiting import settled

# The queue's first row is the newest priority-2 alarm (#7, outer-diameter): priority first,
# then newest, shelved ones after the open ones.


async def test_three_keystrokes_acknowledge_with_the_first_reason(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        assert isinstance(app.screen, AlarmQueueScreen)
        await pilot.press("enter", "1", "enter")
        await settled(pilot)
        assert actions.calls == [("acknowledge", ([7], "tool wear", ""))]
        assert isinstance(app.screen, AlarmQueueScreen)


async def test_acknowledge_with_reason_digit_and_typed_note(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "k", "2")
        await pilot.press(*"lot 4471 started", "enter")
        await settled(pilot)
        assert actions.calls == [("acknowledge", ([7], "material lot change", "lot 4471 started"))]


async def test_enter_without_a_reason_acknowledges_nothing(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "enter", "tab", "x", "enter")
        await settled(pilot)
        assert actions.calls == []
        assert isinstance(app.screen, AckPanel)
        hint = app.screen.query_one("#ack-hint", Static)
        assert "pick a reason" in str(hint.render())
        await pilot.press("escape")
        assert isinstance(app.screen, AlarmQueueScreen)


async def test_digit_beyond_the_reason_list_is_ignored(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "enter", "9")
        assert isinstance(app.screen, AckPanel)
        assert app.screen.reason is None
        await pilot.press("3", "enter")
        await settled(pilot)
        assert actions.calls == [("acknowledge", ([7], "gauge or measurement error", ""))]


async def test_refused_acknowledgement_shows_the_message_and_keeps_running(
    app: LinewatchApp, actions: FakeActions
) -> None:
    actions.fail_with = "alarm 7 is already closed"
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "enter", "1", "enter")
        await settled(pilot)
        assert actions.calls == []
        assert any("already closed" in n.message for n in app._notifications)
        await pilot.press("enter", "1", "enter")
        await settled(pilot)
        assert actions.calls == [("acknowledge", ([7], "tool wear", ""))]


async def test_acknowledge_all_of_one_characteristic(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "K", "5", "enter")
        await settled(pilot)
        assert actions.calls == [
            ("acknowledge_characteristic", ("outer-diameter", "no cause found", ""))
        ]


async def test_shelve_with_duration_and_reason(app: LinewatchApp, actions: FakeActions) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "s")
        assert isinstance(app.screen, ShelvePanel)
        app.screen.query_one("#shelve-for", Input).value = ""
        await pilot.press(*"1h30m", "enter", *"die change", "enter")
        await settled(pilot)
        assert actions.calls == [("shelve", (7, 5400.0, "die change"))]


async def test_shelve_refuses_a_duration_that_does_not_parse(
    app: LinewatchApp, actions: FakeActions
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "s")
        app.screen.query_one("#shelve-for", Input).value = "soon"
        await pilot.press("enter")
        await settled(pilot)
        assert isinstance(app.screen, ShelvePanel)
        assert "not a duration" in str(app.screen.query_one("#shelve-hint", Static).render())
        assert actions.calls == []


async def test_shelve_needs_a_reason(app: LinewatchApp, actions: FakeActions) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "s", "enter", "enter")
        await settled(pilot)
        assert isinstance(app.screen, ShelvePanel)
        assert actions.calls == []
        await pilot.press(*"cleaning", "enter")
        await settled(pilot)
        assert actions.calls == [("shelve", (7, 1800.0, "cleaning"))]


async def test_unshelve_the_shelved_alarm(app: LinewatchApp, actions: FakeActions) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "u")
        assert actions.calls == []  # #7 is not shelved
        await pilot.press(*["down"] * 5, "u")
        await settled(pilot)
        assert actions.calls == [("unshelve", (3,))]


async def test_reaction_plan_follows_the_highlighted_alarm(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        plan = app.screen.query_one("#queue-plan", Static)
        assert "die centring" in str(plan.render())
        await pilot.press(*["down"] * 5)
        await settled(pilot)
        assert "Re-weigh the last carton" in str(plan.render())


async def test_queue_orders_priority_then_newest_with_shelved_last(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        screen = app.screen
        assert isinstance(screen, AlarmQueueScreen)
        assert screen._ids == [7, 2, 6, 5, 4, 3]
