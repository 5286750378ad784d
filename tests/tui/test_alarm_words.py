"""What the screen says about alarms: how many wait for an acknowledgement, and feed alarms named
by their file rather than a long path."""

from __future__ import annotations

import dataclasses
import re

from textual.widgets import DataTable, Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.queue import AlarmQueueScreen
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.present import view

from .fake_line import FakeSource, build_snapshot
from .waiting import until


def top_bar_text(app: LinewatchApp) -> str:
    return str(app.screen.query_one(TopBar).render())


async def test_top_bar_counts_returned_unacknowledged_alarms_as_waiting(
    app: LinewatchApp, source: FakeSource
) -> None:
    alarms = build_snapshot().alarms
    # ISA-18.2: both unacknowledged and returned-unacknowledged alarms need an acknowledgement
    active = sum(a.state == view.UNACKNOWLEDGED for a in alarms)
    returned = sum(a.state == view.RETURNED_UNACKNOWLEDGED for a in alarms)
    assert returned > 0 and active > 0  # the fixed line has both kinds
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.pause()
        assert f"{active + returned} to acknowledge ({active} still active)" in top_bar_text(app)
        # every alarm returned to normal but none acknowledged: still waiting, none active
        waiting = [dataclasses.replace(a, state=view.RETURNED_UNACKNOWLEDGED) for a in alarms]
        source.publish(dataclasses.replace(build_snapshot(), version=2, alarms=waiting))
        await until(lambda: f"{len(alarms)} to acknowledge (none still active)"
                    in top_bar_text(app))
        done = [dataclasses.replace(a, state=view.ACKNOWLEDGED) for a in alarms]
        source.publish(dataclasses.replace(build_snapshot(), version=3, alarms=done))
        await until(lambda: "nothing to acknowledge" in top_bar_text(app))


async def test_narrow_top_bar_drops_the_title_before_the_alarm_count(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f")
        await pilot.pause()
        text = top_bar_text(app)
        assert "extrusion line 3" not in text
        assert text.startswith(" feed pulse") and "to acknowledge" in text


async def test_feed_alarm_shows_the_file_name_and_its_path_below(app: LinewatchApp) -> None:
    feed_alarm = next(a for a in build_snapshot().alarms if a.kind == "feed-health")
    assert feed_alarm.characteristic == "/srv/line3/scale.jsonl"
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        screen = app.screen
        assert isinstance(screen, AlarmQueueScreen)
        table = screen.query_one("#queue-table", DataTable)
        row = [str(k.value) for k in table.rows].index(str(feed_alarm.id))
        assert str(table.get_cell_at((row, 2))) == "scale.jsonl"
        table.move_cursor(row=row)
        await pilot.pause()
        plan = str(screen.query_one("#queue-plan", Static).render())
        assert "/srv/line3/scale.jsonl" in plan
        await pilot.press("c")  # a file has no chart: its close-up is the feed pulse
        await pilot.pause()
        assert isinstance(app.screen, FeedScreen)
        feeds = app.screen.query_one("#feed-table", DataTable)
        files = [f.file for f in build_snapshot().feeds]
        assert feeds.cursor_row == files.index(feed_alarm.characteristic)
        # again after looking at another file: the alarm's file is highlighted once more
        await pilot.press("up", "a")
        await pilot.pause()
        await pilot.press("c")
        await pilot.pause()
        assert isinstance(app.screen, FeedScreen)
        assert feeds.cursor_row == files.index(feed_alarm.characteristic)


async def test_feed_pulse_names_files_by_their_base_name(app: LinewatchApp) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f")
        await pilot.pause()
        table = app.screen.query_one("#feed-table", DataTable)
        names = [str(table.get_cell_at((r, 1))) for r in range(table.row_count)]
        assert names == [f.file.rsplit("/", 1)[-1] for f in build_snapshot().feeds]


async def test_a_close_up_top_bar_fits_80_columns_with_the_alarm_count_in_short(
    app: LinewatchApp,
) -> None:
    alarms = build_snapshot().alarms
    waiting = sum(a.state in (view.UNACKNOWLEDGED, view.RETURNED_UNACKNOWLEDGED) for a in alarms)
    active = sum(a.state == view.UNACKNOWLEDGED for a in alarms)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter")
        await pilot.pause()
        bar = app.screen.query_one(TopBar)
        text = bar.render()
        plain = getattr(text, "plain", str(text))
        assert len(plain.rstrip()) <= 80
        assert f"{waiting} to ack, {active} active" in plain
        assert plain.rstrip().endswith("readings")  # the close-up's own words are not cut off


async def test_a_shelved_alarm_without_a_reason_reads_cleanly(
    app: LinewatchApp, source: FakeSource
) -> None:
    picture = build_snapshot()
    shelved = next(a for a in picture.alarms if a.state == view.SHELVED)
    shelved.reason = None
    source.picture = picture
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a")
        table = app.screen.query_one("#queue-table", DataTable)
        table.move_cursor(row=[str(k.value) for k in table.rows].index(str(shelved.id)))
        await pilot.pause()
        plan = str(app.screen.query_one("#queue-plan", Static).render())
    line = next(s for s in plan.split("\n") if s.startswith("shelved until"))
    assert re.fullmatch(r"shelved until \d\d:\d\d:\d\d", line.strip()), line


async def test_a_chart_alarm_row_starts_with_its_chart_and_counts_every_rule(
    app: LinewatchApp, source: FakeSource
) -> None:
    picture = build_snapshot()
    chart_alarm = next(a for a in picture.alarms if a.episodes > 1 and a.kind == "beyond-limits")
    async with app.run_test(size=(80, 24)) as pilot:  # the chart is seen at 80 columns too
        await pilot.press("a")
        await pilot.pause()
        table = app.screen.query_one("#queue-table", DataTable)
        row = [str(k.value) for k in table.rows].index(str(chart_alarm.id))
        what = str(table.get_cell_at((row, 3)))
    assert what.startswith(f"{chart_alarm.chart}: {chart_alarm.counts}"), what
    assert f"{chart_alarm.episodes} episodes" in what


async def test_an_out_of_spec_row_says_how_many_parts_to_quarantine(
    app: LinewatchApp, source: FakeSource
) -> None:
    spec = next(a for a in build_snapshot().alarms if a.kind == "out-of-spec")
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.press("a")
        await pilot.pause()
        table = app.screen.query_one("#queue-table", DataTable)
        row = [str(k.value) for k in table.rows].index(str(spec.id))
        what = str(table.get_cell_at((row, 3)))
    assert f"{spec.above_usl} above USL" in what and "below LSL" not in what
