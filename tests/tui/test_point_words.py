"""The close-up says 'readings' for single measurements and 'subgroups' (or, for individuals,
'points') for what its chart plots, in the header, at the cursor and in the trend."""

from __future__ import annotations

from textual.widgets import Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.widgets.top_bar import TopBar


def _plain(widget: object) -> str:
    rendered = widget.render()  # type: ignore[attr-defined]
    return getattr(rendered, "plain", str(rendered))


async def test_a_subgrouped_close_up_counts_readings_and_names_subgroups(
        app: LinewatchApp) -> None:
    od = app.source.snapshot().characteristics[0]  # type: ignore[attr-defined]
    assert od.subgroup_size == 5
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.press("enter")
        await pilot.pause()
        header = _plain(app.screen.query_one(TopBar))
        cursor = str(app.screen.query_one("#closeup-cursor", Static).render())
        trend = str(app.screen.query_one("#closeup-trend", Static).render())
    assert header.rstrip().endswith(f"{od.points} readings")
    first = cursor.split("\n")[0]  # the rules' own words below speak of chart points
    assert first.startswith("cursor: subgroup ") and first.endswith("(mean of 5)")
    assert "trend over the last" in trend and "subgroups" in trend and "points" not in trend


async def test_an_individuals_close_up_calls_its_plotted_values_points(app: LinewatchApp) -> None:
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.press("down", "enter")  # wall-thickness: one reading per point
        await pilot.pause()
        header = _plain(app.screen.query_one(TopBar))
        cursor = str(app.screen.query_one("#closeup-cursor", Static).render())
    assert header.rstrip().endswith("readings")
    assert "cursor: point " in cursor and "mean of" not in cursor
