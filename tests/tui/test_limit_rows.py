"""Every limit the close-up names sits in the row its value says, at every terminal size: the
labels read top to bottom in the order of their values, and a limit drawn across the chart has
its label on its own line. (Geometry checked against the values themselves.)"""

from __future__ import annotations

import re

import pytest
from rich.console import Console

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.glyphs import UNICODE
from linewatch.faces.tui.widgets.chart_pane import ChartPane
from linewatch.faces.tui.widgets.control_chart import LABEL_WIDTH, draw_control_chart
from linewatch.present import view

from .fake_line import build_snapshot

SIZES = [(80, 24), (100, 30), (160, 48)]
LABEL = re.compile(r"\b(UCL|LCL|CL|USL|LSL)([v^]?) (-?[0-9.]+)")


def rendered_lines(text: object, width: int) -> list[str]:
    console = Console(width=width + 40, color_system=None, file=None)
    with console.capture() as cap:
        console.print(text, crop=False, soft_wrap=True)
    return cap.get().rstrip("\n").split("\n")


def labelled_rows(lines: list[str], plot_width: int) -> list[tuple[int, str, str, float]]:
    """(row, name, edge mark, value) of every limit label right of the plot."""
    found = []
    for row, line in enumerate(lines):
        for m in LABEL.finditer(line[plot_width:]):
            found.append((row, m.group(1), m.group(2), float(m.group(3))))
    return found


def assert_rows_follow_values(lines: list[str], plot_width: int, expected: set[str],
                              line_glyphs: str) -> None:
    labels = labelled_rows(lines, plot_width)
    assert {name for _, name, _, _ in labels} == expected, lines
    by_value = sorted(labels, key=lambda lab: -lab[3])  # highest value first = topmost row
    rows = [row for row, *_ in by_value]
    assert rows == sorted(rows) and len(set(rows)) == len(rows), by_value
    for row, name, edge, _value in labels:
        plot = lines[row][:plot_width]
        if edge:  # named at the edge, beyond everything drawn: nothing else on that side
            others = [r for r, n, _, _ in labels if n != name]
            assert all(r < row for r in others) if edge == "v" else all(r > row for r in others)
        else:  # drawn across the chart on its row (or, sharing it, on the row next to it)
            near = [lines[r][:plot_width] for r in (row - 1, row, row + 1) if 0 <= r < len(lines)]
            assert max(sum(p.count(g) for g in line_glyphs) for p in near) >= plot_width // 3, \
                (name, plot)


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
async def test_close_up_limits_sit_in_value_order_at_every_size(
        app: LinewatchApp, size: tuple[int, int]) -> None:
    # outer-diameter of the fake line: both spec limits lie far outside its control band
    async with app.run_test(size=size) as pilot:
        await pilot.press("enter")
        await pilot.pause()
        pane = app.screen.query_one("#closeup-location", ChartPane)
        width = pane.size.width
        lines = rendered_lines(pane.render(), width)
    assert_rows_follow_values(lines, width - LABEL_WIDTH, {"CL", "UCL", "LCL", "USL", "LSL"},
                              "─═")


@pytest.mark.parametrize("size", SIZES, ids=lambda s: f"{s[0]}x{s[1]}")
@pytest.mark.parametrize("specs", [(24.99, 25.07), (24.93, 25.07), (24.80, 25.06)],
                         ids=["inside-band", "just-outside", "one-far"])
def test_drawn_limits_sit_in_value_order(size: tuple[int, int],
                                         specs: tuple[float, float]) -> None:
    loc = build_snapshot().characteristics[0].location
    assert loc is not None
    width, height = size[0] - 2, max(5, (size[1] - 6) // 2)  # about the close-up's chart pane
    lsl, usl = specs
    lines = rendered_lines(draw_control_chart(loc, width, height, UNICODE, lsl, usl), width)
    assert_rows_follow_values(lines, width - LABEL_WIDTH, {"CL", "UCL", "LCL", "USL", "LSL"},
                              "─═")


def test_close_limits_keep_their_order_on_a_short_chart() -> None:
    chart = view.ChartView("individuals", [0.0, 0.5, -0.5], [0, 1, 2], ["", "", ""], center=0.0,
                           ucl=3.0, lcl=-3.0, sigma=1.0, phase_starts=[0])
    lines = rendered_lines(draw_control_chart(chart, 40, 6, UNICODE, -3.2, 3.1), 40)
    labels = labelled_rows(lines, 40 - LABEL_WIDTH)
    rows = [row for row, *_ in sorted(labels, key=lambda lab: -lab[3])]
    assert rows == sorted(rows)
