"""The close-up reports the trend and box figures of the points it draws; checked against
general-purpose references (scipy.stats.linregress, statistics.quantiles)."""

from __future__ import annotations

import io
import math
import re
import statistics

import numpy as np
import pytest
from rich.console import Console
from scipy import stats
from textual.widgets import Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.glyphs import ASCII
from linewatch.faces.tui.widgets.box_plot import draw_box_plot
from linewatch.present.close_up import TREND_WINDOW, box_figures

from .fake_line import FakeSource, build_snapshot


async def test_trend_line_matches_scipy_linregress_over_the_window(app: LinewatchApp) -> None:
    values = build_snapshot().characteristics[1].location.values[-TREND_WINDOW:]  # type: ignore
    ref = stats.linregress(np.arange(len(values)), values)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter")
        await pilot.pause()
        text = str(app.screen.query_one("#closeup-trend", Static).render())
    line = next(s for s in text.split("\n") if s.startswith("slope"))
    found = re.search(r"slope (\S+) .*  R² (\S+)  ", line)
    assert found is not None
    slope, r2_shown = float(found.group(1)), float(found.group(2))
    assert slope == pytest.approx(ref.slope, rel=1e-3)  # shown to 4 significant figures
    assert r2_shown == pytest.approx(ref.rvalue**2, abs=0.005)
    if ref.pvalue < 0.05:
        assert "reaches USL" in text or "reaches LSL" in text


def test_box_plot_figures_match_the_standard_library_quartiles() -> None:
    values = [2.11, 2.09, 2.14, 2.10, 2.12, 2.08, 2.13, 2.10, 2.30, 2.11]
    q1, med, q3 = statistics.quantiles(values, n=4, method="inclusive")
    words = draw_box_plot(box_figures(values), 1.9, 2.4, 60, ASCII).plain.split("\n")[2]
    found = re.search(r"Q1 (\S+)  median (\S+)  Q3 (\S+)", words)
    assert found is not None
    shown = [float(x) for x in found.groups()]
    # shown to 4 significant figures, so within half a unit of the last digit
    assert shown == [pytest.approx(q1, abs=5.1e-4), pytest.approx(med, abs=5.1e-4),
                     pytest.approx(q3, abs=5.1e-4)]
    # Tukey's fences (common practice): 2.30 is beyond Q3 + 1.5·IQR, so it is an outlier
    assert q3 + 1.5 * (q3 - q1) < 2.30
    assert "outliers 1: 2.300" in words


async def test_a_significant_trend_is_projected_in_points_and_in_time(
    app: LinewatchApp,
) -> None:
    wall = build_snapshot().characteristics[1]
    values = wall.location.values[-TREND_WINDOW:]  # type: ignore[union-attr]
    ref = stats.linregress(np.arange(len(values)), values)
    assert ref.pvalue < 0.05 and ref.slope > 0 and wall.usl is not None
    assert wall.seconds_per_point is not None
    # points after the last one until the fitted line reaches the USL
    last_fitted = ref.intercept + ref.slope * (len(values) - 1)
    points = math.ceil((wall.usl - last_fitted) / ref.slope)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter")
        await pilot.pause()
        text = str(app.screen.query_one("#closeup-trend", Static).render()).replace("\n", " ")
    found = re.search(r"reaches USL \S+ in about (\d+) points, ~(\d+)([smh]) at the current pace",
                      text)
    assert found is not None, text
    assert int(found.group(1)) == points
    seconds = int(found.group(2)) * {"s": 1, "m": 60, "h": 3600}[found.group(3)]
    assert seconds == pytest.approx(points * wall.seconds_per_point, rel=0.1, abs=30)


async def test_without_a_known_pace_the_projection_stays_in_points(
    app: LinewatchApp, source: FakeSource
) -> None:
    picture = build_snapshot()
    picture.characteristics[1].seconds_per_point = None
    source.picture = picture
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("down", "enter")
        await pilot.pause()
        text = str(app.screen.query_one("#closeup-trend", Static).render()).replace("\n", " ")
    assert re.search(r"in about \d+ points if it goes on", text), text
    assert "pace" not in text


async def test_the_box_plot_of_a_subgrouped_characteristic_says_it_shows_means(
    app: LinewatchApp,
) -> None:
    od = build_snapshot().characteristics[0]
    assert od.subgroup_size == 5
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.press("enter")
        await pilot.pause()
        box = app.screen.query_one("#closeup-box", Static)
        console = Console(width=120, file=io.StringIO(), color_system=None)
        console.print(box.content)
        heading = console.file.getvalue().split("\n")[0]  # type: ignore[attr-defined]
    assert "subgroup means (n=5)" in heading


def test_a_trend_already_past_its_limit_is_not_given_zero_points_to_go() -> None:
    from linewatch.engine.summary import trend
    from linewatch.faces.tui.screens.close_up import projection_words

    rising = [10.0 + 0.5 * i for i in range(20)]  # ends at 19.5, beyond a USL of 15
    fit = trend(rising, None, 15.0)
    assert fit.slope is not None and fit.points_to_spec == 0
    words = projection_words(fit.slope, fit.points_to_spec, None, 15.0, 6.0)
    assert "already past USL" in words and "0 points" not in words


async def test_the_box_plot_shows_individual_readings_when_the_source_gives_them(
    app: LinewatchApp, source: FakeSource
) -> None:
    picture = build_snapshot()
    od = picture.characteristics[0]
    od.recent_values = [25.0 + 0.01 * (i % 7 - 3) for i in range(60)] + [25.3]  # 25.3 lies out
    source.picture = picture
    async with app.run_test(size=(160, 48)) as pilot:
        await pilot.press("enter")
        await pilot.pause()
        box = app.screen.query_one("#closeup-box", Static)
        console = Console(width=120, file=io.StringIO(), color_system=None)
        console.print(box.content)
        shown = console.file.getvalue()  # type: ignore[attr-defined]
    assert shown.split("\n")[0].startswith("last 61 readings against the spec limits")
    # the figures under the plot are those of the readings (statistics.quantiles, inclusive)
    q1, median, q3 = statistics.quantiles(od.recent_values, n=4, method="inclusive")
    assert f"Q1 {q1:.3f}  median {median:.3f}  Q3 {q3:.3f}" in shown
    assert "outliers 1: 25.300" in shown
