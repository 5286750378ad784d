"""A control chart drawn in character cells with Rich: points, CL/UCL/LCL, ±1σ/±2σ zones, spec
limits, rule numbers at signalling points, phase separators and an optional cursor column."""

from __future__ import annotations

from dataclasses import dataclass

from rich.text import Text

from linewatch.ui import palette
from linewatch.ui.formatting import fmt_scaled, fmt_value, rule_digit
from linewatch.ui.glyphs import Glyphs
from linewatch.view import ChartView

LABEL_WIDTH = 13


@dataclass(slots=True)
class ChartWindow:
    """Which of a chart's points fit in `width` columns (the newest ones)."""

    start: int  # position in chart.values of the first shown point
    count: int


def window_for(chart: ChartView, width: int, cursor: int | None = None) -> ChartWindow:
    """The newest points that fit (one column each at least), shifted left when the cursor lies
    before them."""
    n = len(chart.values)
    count = min(n, max(1, width))
    start = n - count
    if cursor is not None and cursor < start:
        start = max(0, cursor)
    return ChartWindow(start, count)


class _Canvas:
    """A grid of (character, style) cells, later turned into one Rich Text."""

    def __init__(self, width: int, height: int) -> None:
        self.width = width
        self.height = height
        self.cells = [[(" ", "")] * width for _ in range(height)]

    def put(self, row: int, col: int, ch: str, style: str = "") -> None:
        if 0 <= row < self.height and 0 <= col < self.width:
            self.cells[row][col] = (ch, style)

    def hline(self, row: int, ch: str, style: str, every: int = 1) -> None:
        for col in range(0, self.width, every):
            self.put(row, col, ch, style)

    def text(self, labels: dict[int, Text]) -> Text:
        out = Text(end="")
        for r, line in enumerate(self.cells):
            for ch, st in line:
                out.append(ch, st)
            if r in labels:
                out.append(" ")
                out.append_text(labels[r])
            if r < self.height - 1:
                out.append("\n")
        return out


def draw_control_chart(
    chart: ChartView,
    width: int,
    height: int,
    glyphs: Glyphs,
    lsl: float | None = None,
    usl: float | None = None,
    cursor: int | None = None,
) -> Text:
    """Render `chart` in `width` x `height` cells (labels take LABEL_WIDTH more on the right).

    `cursor` is a position in chart.values to highlight; spec limits far outside the control
    band are named in the label column instead of squashing the chart.
    """
    plot_w = max(5, width - LABEL_WIDTH)
    height = max(5, height)
    win = window_for(chart, plot_w, cursor)
    values = chart.values[win.start : win.start + win.count]
    canvas = _Canvas(plot_w, height)
    if not values:
        return Text("no points yet", palette.LABEL)

    limits = [v for v in (chart.center, chart.ucl, chart.lcl) if v is not None]
    span_values = list(values) + limits
    half = None
    if chart.center is not None and chart.ucl is not None and chart.lcl is not None:
        half = max(chart.ucl - chart.center, chart.center - chart.lcl)
    specs: dict[str, float] = {}
    off_chart: list[str] = []
    for name, spec in (("USL", usl), ("LSL", lsl)):
        if spec is None:
            continue
        if half is None or chart.center is None or abs(spec - chart.center) <= 2.5 * half:
            specs[name] = spec
            span_values.append(spec)
        else:
            off_chart.append(f"{name} {fmt_value(spec)}")
    lo, hi = min(span_values), max(span_values)
    if hi == lo:
        lo, hi = lo - 1.0, hi + 1.0
    pad = (hi - lo) * 0.04
    lo, hi = lo - pad, hi + pad

    def row_of(v: float) -> int:
        return round((hi - v) / (hi - lo) * (height - 1))

    step = max(1, min(4, plot_w // max(1, win.count)))

    def col_of(j: int) -> int:
        return j * step

    labels: dict[int, Text] = {}

    def label(row: int, name: str, value: float, style: str) -> None:
        if 0 <= row < height and row not in labels:
            shown = fmt_scaled(value, chart.sigma) if chart.sigma else fmt_value(value)
            labels[row] = Text(f"{name} {shown}"[:LABEL_WIDTH - 1], style)

    if chart.center is not None and chart.sigma:
        for k in (1, 2):
            for sign in (1, -1):
                z = chart.center + sign * k * chart.sigma
                if lo <= z <= hi and (chart.lcl is None or z > chart.lcl or sign > 0):
                    canvas.hline(row_of(z), glyphs.zone, palette.ZONE, every=2)
    for name, spec in specs.items():
        canvas.hline(row_of(spec), glyphs.spec, palette.SPEC)
        label(row_of(spec), name, spec, palette.SPEC)
    if chart.ucl is not None:
        canvas.hline(row_of(chart.ucl), glyphs.hline, palette.LIMIT)
        label(row_of(chart.ucl), "UCL", chart.ucl, palette.LIMIT)
    if chart.lcl is not None:
        canvas.hline(row_of(chart.lcl), glyphs.hline, palette.LIMIT)
        label(row_of(chart.lcl), "LCL", chart.lcl, palette.LIMIT)
    if chart.center is not None:
        canvas.hline(row_of(chart.center), glyphs.center, palette.CENTER)
        label(row_of(chart.center), "CL", chart.center, palette.CENTER)

    indices = chart.indices[win.start : win.start + win.count] if chart.indices else []
    starts = set(chart.phase_starts)
    for j, idx in enumerate(indices):
        if idx in starts and idx != 0:
            for r in range(height):
                col = max(0, col_of(j) - (1 if step > 1 else 0))
                canvas.put(r, col, glyphs.phase, palette.PHASE)

    rules = chart.rules[win.start : win.start + win.count] if chart.rules else []
    for j, v in enumerate(values):
        mark = rule_digit(rules[j]) if j < len(rules) else ""
        if mark:
            canvas.put(row_of(v), col_of(j), mark, palette.SIGNAL)
        else:
            canvas.put(row_of(v), col_of(j), glyphs.point, palette.POINT)

    if cursor is not None and win.start <= cursor < win.start + win.count:
        col = col_of(cursor - win.start)
        for r in range(height):
            ch, st = canvas.cells[r][col]
            canvas.put(r, col, ch, f"{st} {palette.CURSOR}".strip())
        canvas.put(0, col, glyphs.cursor, palette.CURSOR)

    for i, note in enumerate(off_chart):
        row = 0 if note.startswith("USL") else height - 1
        if row in labels:
            row = min(height - 1, row + 1) if row == 0 else max(0, row - 1 - i)
        labels.setdefault(row, Text(f"{note[:3]}{'^' if row < height // 2 else 'v'}{note[3:]}"
                                    [:LABEL_WIDTH - 1], palette.SPEC))
    return canvas.text(labels)
