"""A long alarm queue is built a few screenfuls at a time, and every key still reaches every
alarm: PgDn/PgUp, arrows, Ctrl+End/Ctrl+Home, and acknowledging after paging."""

from __future__ import annotations

import dataclasses
import itertools

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.queue import AlarmQueueScreen, sorted_alarms
from linewatch.present import view

from .fake_line import NOW, FakeActions, FakeSource
from .waiting import settled

MANY = 150  # several windows' worth at 80x24
STATES = [view.UNACKNOWLEDGED, view.ACKNOWLEDGED, view.RETURNED_UNACKNOWLEDGED, view.SHELVED]


def many_alarms(source: FakeSource, n: int = MANY, version: int = 50) -> list[view.AlarmView]:
    """Give the fake line `n` alarms (mixed priority and state); returns them."""
    alarms = [
        view.AlarmView(id=1000 + i, kind="run-rule", characteristic="outer-diameter",
                       chart="xbar", rule="we2", description="2 of 3 beyond 2 sigma",
                       state=STATES[i % 4], priority=i % 3 + 1, raised_at=NOW - 60 * i,
                       first_index=i, last_index=i, reasons=["tool wear"])
        for i in range(n)
    ]
    source.publish(dataclasses.replace(source.picture, version=version, alarms=alarms))
    return alarms


def queue(app: LinewatchApp) -> AlarmQueueScreen:
    screen = app.screen
    assert isinstance(screen, AlarmQueueScreen)
    return screen


def highlighted_id(app: LinewatchApp) -> int:
    alarm = queue(app).highlighted()
    assert alarm is not None
    return alarm.id


def cursor_on_screen(app: LinewatchApp) -> bool:
    table = queue(app).table
    top = round(table.scroll_y)
    return top <= table.cursor_row < top + table.page_rows()


async def test_page_down_reaches_the_last_alarm_and_page_up_the_first(
    app: LinewatchApp, source: FakeSource
) -> None:
    order = [a.id for a in sorted_alarms(many_alarms(source))]
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        await settled(pilot)
        table = queue(app).table
        assert 0 < table.row_count < MANY  # only a window of the queue is built
        seen = [highlighted_id(app)]
        for _ in range(MANY):
            await pilot.press("pagedown")
            seen.append(highlighted_id(app))
            assert cursor_on_screen(app)
            if seen[-1] == order[-1]:
                break
        assert seen[-1] == order[-1]
        positions = [order.index(i) for i in seen]
        assert positions == sorted(positions) and len(set(positions)) == len(positions)
        assert max(b - a for a, b in itertools.pairwise(positions)) <= table.page_rows()
        for _ in range(MANY):
            await pilot.press("pageup")
            assert cursor_on_screen(app)
            if highlighted_id(app) == order[0]:
                break
        assert highlighted_id(app) == order[0]


async def test_arrow_keys_walk_every_alarm_once_in_queue_order(
    app: LinewatchApp, source: FakeSource
) -> None:
    order = [a.id for a in sorted_alarms(many_alarms(source))]
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        await settled(pilot)
        walked = [highlighted_id(app)]
        for _ in range(MANY - 1):
            await pilot.press("down")
            walked.append(highlighted_id(app))
        assert walked == order
        assert cursor_on_screen(app)
        await pilot.press("down")  # past the end: stays on the last
        assert highlighted_id(app) == order[-1]
        back = [highlighted_id(app)]
        for _ in range(MANY - 1):
            await pilot.press("up")
            back.append(highlighted_id(app))
        assert back == order[::-1]


async def test_jumps_to_both_ends_and_keys_act_on_the_alarm_paged_to(
    app: LinewatchApp, source: FakeSource, actions: FakeActions
) -> None:
    alarms = many_alarms(source)
    order = sorted_alarms(alarms)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        await settled(pilot)
        await pilot.press("ctrl+end")
        assert highlighted_id(app) == order[-1].id and cursor_on_screen(app)
        await pilot.press("ctrl+home")
        assert highlighted_id(app) == order[0].id and cursor_on_screen(app)
        await pilot.press("pagedown", "pagedown", "pagedown", "pagedown")
        target = queue(app).highlighted()
        assert target is not None and order.index(target) > queue(app).table.row_count
        # a new picture keeps the cursor on the same alarm, far down the queue
        source.publish(dataclasses.replace(source.picture, version=51))
        await pilot.pause(0.3)
        assert queue(app).drawn_version == 51
        assert highlighted_id(app) == target.id and cursor_on_screen(app)
        if target.state in (view.ACKNOWLEDGED, view.NORMAL):
            await pilot.press("down")
            target = queue(app).highlighted()
            assert target is not None
        await pilot.press("enter", "1", "enter")
        await settled(pilot)
        assert actions.calls == [("acknowledge", ([target.id], "tool wear", ""))]
