"""Redraws are batched and driven by the source's notifications; the bell rings for new urgent
alarms only. Notifications come from a real background thread, as the monitor sends them."""

from __future__ import annotations

import copy
import dataclasses
import threading
import time

import pytest
from textual.widgets import DataTable, Static

from linewatch.faces.tui.app import REFRESH_HZ, LinewatchApp
from linewatch.faces.tui.screens.queue import AlarmQueueScreen
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.present import view

from .fake_line import NOW, FakeActions, FakeSource, build_snapshot, fixed_clock
from .waiting import until


def changed(version: int, value: float | None = None,
            alarm: view.AlarmView | None = None) -> view.LineSnapshot:
    line = build_snapshot()
    line.version = version
    if value is not None:
        line.characteristics[0] = copy.copy(line.characteristics[0])
        line.characteristics[0].last_value = value
    if alarm is not None:
        line.alarms.append(alarm)
    return line


def new_alarm(id_: int, priority: int) -> view.AlarmView:
    return view.AlarmView(id=id_, kind="beyond-limits", characteristic="ovality",
                          chart="individuals", rule="we1", description="a point outside",
                          state=view.UNACKNOWLEDGED, priority=priority, raised_at=NOW)


def publish_from_thread(source: FakeSource, pictures: list[view.LineSnapshot]) -> None:
    worker = threading.Thread(target=lambda: [source.publish(p) for p in pictures])
    worker.start()
    worker.join()


async def test_a_burst_of_notifications_is_drawn_in_few_redraws(
    app: LinewatchApp, source: FakeSource
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        before = source.snapshot_calls
        started = time.monotonic()
        publish_from_thread(source, [changed(v, value=30.0 + v) for v in range(2, 202)])
        await until(lambda: app.line.version == 201)
        await pilot.pause()
        taken = source.snapshot_calls - before
        # 200 notifications, but snapshots only at the ~10 Hz pace of the timer
        assert 1 <= taken <= 10 * (time.monotonic() - started) + 2
        cell = app.screen.query_one("#board-table", DataTable).get_cell("outer-diameter", "name")
        assert "231.0" in str(cell)


async def test_an_idle_screen_takes_no_snapshot(app: LinewatchApp, source: FakeSource) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        before = source.snapshot_calls
        # a timer at the refresh pace, started after the app's own on the same loop: once it
        # has ticked five times, the refresh timer has had its chances too
        ticks: list[float] = []
        app.set_interval(1.0 / REFRESH_HZ, lambda: ticks.append(time.monotonic()))
        await until(lambda: len(ticks) >= 5)
        assert source.snapshot_calls == before


async def test_bell_rings_once_for_a_new_urgent_alarm(source: FakeSource) -> None:
    app = LinewatchApp(source, FakeActions(), bell=True, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        assert app.bells_rung == 0  # alarms already open at start are on screen, not rung
        publish_from_thread(source, [changed(2, alarm=new_alarm(99, 4))])
        await until(lambda: app.line.version == 2)
        assert app.bells_rung == 0  # priority 4 is not urgent
        publish_from_thread(source, [changed(3, alarm=new_alarm(100, 1))])
        await until(lambda: app.line.version == 3)
        assert app.bells_rung == 1
        publish_from_thread(source, [changed(4, alarm=new_alarm(100, 1))])
        await until(lambda: app.line.version == 4)
        assert app.bells_rung == 1  # the same alarm again rings nothing


async def test_bell_can_be_turned_off(source: FakeSource) -> None:
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        publish_from_thread(source, [changed(2, alarm=new_alarm(100, 1))])
        await until(lambda: app.line.version == 2)
        assert app.bells_rung == 0


async def test_ages_move_on_with_the_clock_without_a_new_snapshot(source: FakeSource) -> None:
    now = [NOW]
    app = LinewatchApp(source, FakeActions(), bell=False, clock=lambda: now[0],
                       ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        table = app.screen.query_one("#board-table", DataTable)
        assert str(table.get_cell("line-speed", "age")).startswith("<10s")
        before = source.snapshot_calls
        now[0] = NOW + 120
        await until(lambda: str(table.get_cell("line-speed", "age")).startswith("2m"))
        assert source.snapshot_calls == before


class FlakySource(FakeSource):
    """A source whose store is busy for a while."""

    failing = False

    def snapshot(self) -> view.LineSnapshot:
        if self.failing:
            raise OSError("database is locked")
        return super().snapshot()


async def test_a_failing_snapshot_keeps_the_last_picture_and_retries() -> None:
    source = FlakySource()
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        source.failing = True
        publish_from_thread(source, [changed(2, value=99.0)])
        await until(lambda: any("database is locked" in n.message for n in app._notifications))
        assert app.line.version == 1  # the last good picture stays
        source.failing = False
        await until(lambda: app.line.version == 2)  # retried after a pause of about two seconds
        await pilot.press("a")  # and the screen still answers keys
        assert app.current_mode == "alarms"


async def test_a_picture_arriving_before_a_view_is_mounted_waits_for_the_mount(
    app: LinewatchApp, source: FakeSource
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        queue = AlarmQueueScreen()  # created, not yet mounted: no table, no columns
        queue.redraw()  # what the refresh timer does when a picture lands at that moment
        assert queue.drawn_version == -1
        await app.push_screen(queue)
        await pilot.pause()
        assert queue.query_one("#queue-table", DataTable).row_count == 6
        assert queue.drawn_version == app.line.version



async def test_the_clock_and_a_new_picture_during_shutdown_draw_nothing_and_raise_nothing(
    app: LinewatchApp, source: FakeSource, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The once-a-second clock and the refresh timer can fire while the app is being taken
    down, after the board's table is already gone; drawing then must be skipped, not fail."""
    from linewatch.faces.tui.screens.board import BoardTable

    fired: list[str] = []

    def tick_while_going(table: BoardTable) -> None:
        source.publish(changed(99, value=1.0))
        app._tick_clock()
        app._pull_line()
        fired.append("ticked")

    monkeypatch.setattr(BoardTable, "on_unmount", tick_while_going, raising=False)
    async with app.run_test(size=(80, 24)):
        assert isinstance(app.screen.query_one("#board-table"), BoardTable)
    assert fired == ["ticked"]


async def test_the_close_up_reads_its_detail_again_only_when_its_characteristic_moved(
    app: LinewatchApp, source: FakeSource
) -> None:
    """A new picture arrives whenever any characteristic gets a point; the close-up's detail
    (a store read of its points and phases) is read again only when its own row changed."""
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter")  # the close-up of the first row, outer-diameter
        await pilot.pause()
        before = source.detail_calls
        other = build_snapshot()
        other.version = 2
        other.characteristics[2] = copy.copy(other.characteristics[2])
        other.characteristics[2].points += 1  # ovality moved, outer-diameter did not
        source.publish(other)
        await until(lambda: app.line.version == 2)
        await pilot.pause()
        assert source.detail_calls == before
        source.publish(changed(3, value=25.5))  # outer-diameter itself moved
        await until(lambda: source.detail_calls == before + 1)


async def test_bell_rings_for_a_re_raise_and_an_escalation_of_the_same_alarm(
    source: FakeSource,
) -> None:
    app = LinewatchApp(source, FakeActions(), bell=True, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        publish_from_thread(source, [changed(2, alarm=new_alarm(100, 3))])
        await until(lambda: app.line.version == 2)
        assert app.bells_rung == 0  # a run rule (priority 3) is not urgent
        escalated = dataclasses.replace(new_alarm(100, 2), kind="beyond-limits")
        publish_from_thread(source, [changed(3, alarm=escalated)])
        await until(lambda: app.line.version == 3)
        assert app.bells_rung == 1  # escalated to priority 2: rings like a new alarm
        again = dataclasses.replace(escalated, episodes=2)
        publish_from_thread(source, [changed(4, alarm=again)])
        await until(lambda: app.line.version == 4)
        assert app.bells_rung == 2  # its next episode re-raised it


async def test_during_a_flood_the_bell_rings_once_not_for_each_alarm(source: FakeSource) -> None:
    app = LinewatchApp(source, FakeActions(), bell=True, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        pictures = []
        for k in range(5):  # five new urgent alarms while the collector says: flood
            line = changed(2 + k)
            line.alarms += [new_alarm(200 + j, 1) for j in range(k + 1)]
            line.flood, line.flood_window = 11 + k, 600.0
            pictures.append(line)
        for picture in pictures:
            publish_from_thread(source, [picture])
            await until(lambda p=picture: app.line.version == p.version)
        assert app.bells_rung == 1
        assert "ALARM FLOOD: 15 in 10m" in str(app.screen.query_one(TopBar).render())


async def test_a_failing_collector_shows_in_the_top_line_and_the_feeds_view(
    source: FakeSource,
) -> None:
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        line = changed(2)
        line.problem = "OperationalError: database or disk is full"
        publish_from_thread(source, [line])
        await until(lambda: app.line.version == 2)
        top = str(app.screen.query_one(TopBar).render())
        assert "MONITORING FAILING: OperationalError" in top  # at 80 columns too
        await pilot.press("f")
        await pilot.pause()
        shown = " ".join(str(w.render()) for w in app.screen.query(Static))
        assert "collecting fails: OperationalError: database or disk is full" in shown
