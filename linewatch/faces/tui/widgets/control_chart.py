"""A control chart drawn in character cells with Rich: points, CL/UCL/LCL, ±1σ/±2σ zones, spec
limits, rule numbers at signalling points, phase separators and an optional cursor column."""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from dataclasses import dataclass

from rich.text import Text

from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import fmt_scaled, fmt_value
from linewatch.faces.tui.glyphs import Glyphs
from linewatch.present.figures import fmt_reading
from linewatch.present.scales import fraction_of, padded_span
from linewatch.present.view import ChartView

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


@dataclass(frozen=True, slots=True)
class PhaseLines:
    """The limits one phase draws: from its first index on, until the next phase starts."""

    start: int
    center: float | None
    ucl: float | None
    lcl: float | None
    sigma: float | None


def phases_of(chart: ChartView) -> list[PhaseLines]:
    """Every phase's limits, oldest first; a chart without a phase list has its current limits
    across the whole series."""
    if chart.phase_limits:
        return [PhaseLines(*limits) for limits in sorted(chart.phase_limits)]
    if chart.center is None and chart.ucl is None and chart.lcl is None:
        return []
    first = chart.indices[0] if chart.indices else 0
    return [PhaseLines(first, chart.center, chart.ucl, chart.lcl, chart.sigma)]


def separators_of(chart: ChartView, phases: list[PhaseLines]) -> list[int]:
    """Indices where a later phase starts (the first phase needs no separator)."""
    # (limits that step with each subgroup's size change between phases of their own: only
    # the real phase starts get a separator)
    starts = set(chart.phase_starts) | (set() if chart.steps else {p.start for p in phases})
    first = phases[0].start if phases else (chart.indices[0] if chart.indices else 0)
    return sorted(s for s in starts if s > first)


def draw_control_chart(
    chart: ChartView,
    width: int,
    height: int,
    glyphs: Glyphs,
    lsl: float | None = None,
    usl: float | None = None,
    cursor: int | None = None,
    decimals: int | None = None,
) -> Text:
    """Render `chart` in `width` x `height` cells (labels take LABEL_WIDTH more on the right).

    Each point is drawn against its own phase's CL, UCL, LCL and zones, so old limits stay on
    the history; the labels name the limits of the newest phase shown. `cursor` is a position in
    chart.values to highlight; spec limits far outside the control band are named in the label
    column instead of squashing the chart. `decimals`: the readings' (figures.reading_decimals),
    for a chart on the readings' scale; without it the limits show what the chart's σ resolves.
    """
    plot_w = max(5, width - LABEL_WIDTH)
    height = max(5, height)
    win = window_for(chart, plot_w, cursor)
    values = chart.values[win.start : win.start + win.count]
    canvas = _Canvas(plot_w, height)
    if not values:
        return Text("no points yet", palette.LABEL)

    indices = chart.indices[win.start : win.start + win.count] if chart.indices else []
    phases = phases_of(chart)
    starts = [p.start for p in phases]

    def phase_at(j: int) -> PhaseLines | None:
        """The phase of the j-th shown point (points before the first phase take the first)."""
        if not phases:
            return None
        if j >= len(indices):
            return phases[-1]
        return phases[max(0, bisect_right(starts, indices[j]) - 1)]

    step = max(1, min(4, plot_w // max(1, win.count)))

    def col_of(j: int) -> int:
        return j * step

    # which phase each column belongs to; columns right of the newest point keep the last one
    col_phase = [phase_at(min(col // step, win.count - 1)) for col in range(plot_w)]
    shown = [p for p in dict.fromkeys(col_phase) if p is not None]
    newest = shown[-1] if shown else None

    span_values = list(values)
    for phase in shown:
        span_values += [v for v in (phase.center, phase.ucl, phase.lcl) if v is not None]
    half = None
    if newest and newest.center is not None and newest.ucl is not None and newest.lcl is not None:
        half = max(newest.ucl - newest.center, newest.center - newest.lcl)
    specs: dict[str, float] = {}
    off_chart: list[str] = []
    for name, spec in (("USL", usl), ("LSL", lsl)):
        if spec is None:
            continue
        if half is None or newest is None or newest.center is None or \
                abs(spec - newest.center) <= 2.5 * half:
            specs[name] = spec
            span_values.append(spec)
        else:
            off_chart.append(f"{name} {fmt_reading(spec, decimals)}")
    lo, hi = padded_span(span_values, 0.04)
    # a spec limit named instead of drawn gets the edge row to itself, beyond every drawn value,
    # so its label can never sit between lines it lies outside of
    top = 1 if any(note.startswith("USL") for note in off_chart) else 0
    bottom = height - 1 - (1 if any(note.startswith("LSL") for note in off_chart) else 0)

    def row_of(v: float) -> int:
        return top + round((1.0 - fraction_of(v, lo, hi)) * (bottom - top))

    labels: dict[int, Text] = {}
    scale = newest.sigma if newest else chart.sigma

    label_values: dict[int, float] = {}

    def label(row: int, name: str, value: float, style: str) -> None:
        """Name a limit on its line's row; when another limit's name holds that row (both lines
        fall in one row), on the next row towards its side, but never out of value order."""
        if row in labels:
            row += 1 if value < label_values[row] else -1
        if not 0 <= row < height or row in labels:
            return
        if any((r < row) != (v > value) for r, v in label_values.items()):
            return
        if decimals is not None:
            shown_value = fmt_reading(value, decimals)
        else:
            shown_value = fmt_scaled(value, scale) if scale else fmt_value(value)
        labels[row] = Text(f"{name} {shown_value}"[:LABEL_WIDTH - 1], style)
        label_values[row] = value

    for col, p in enumerate(col_phase):
        if p is None or p.center is None or not p.sigma or col % 2:
            continue
        for k in (1, 2):
            for sign in (1, -1):
                z = p.center + sign * k * p.sigma
                if lo <= z <= hi and (p.lcl is None or z > p.lcl or sign > 0):
                    canvas.put(row_of(z), col, glyphs.zone, palette.ZONE)
    for name, spec in specs.items():
        canvas.hline(row_of(spec), glyphs.spec, palette.SPEC)
        label(row_of(spec), name, spec, palette.SPEC)
    for col, p in enumerate(col_phase):
        if p is None:
            continue
        for value, glyph, style in ((p.ucl, glyphs.hline, palette.LIMIT),
                                    (p.lcl, glyphs.hline, palette.LIMIT),
                                    (p.center, glyphs.center, palette.CENTER)):
            if value is not None:
                canvas.put(row_of(value), col, glyph, style)
    if newest is not None:
        for name, value, style in (("UCL", newest.ucl, palette.LIMIT),
                                   ("LCL", newest.lcl, palette.LIMIT),
                                   ("CL", newest.center, palette.CENTER)):
            if value is not None:
                label(row_of(value), name, value, style)

    for s in separators_of(chart, phases):
        j = bisect_left(indices, s)
        if j >= len(indices) or (j == 0 and indices[0] != s):
            continue  # the phase starts outside the shown window
        col = max(0, col_of(j) - (1 if step > 1 else 0))
        for r in range(height):
            canvas.put(r, col, glyphs.phase, palette.PHASE)

    marks = chart.marks[win.start : win.start + win.count] if chart.marks else []
    for j, v in enumerate(values):
        mark = marks[j] if j < len(marks) else ""
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

    for note in off_chart:
        above = note.startswith("USL")
        labels[0 if above else height - 1] = Text(
            f"{note[:3]}{'^' if above else 'v'}{note[3:]}"[:LABEL_WIDTH - 1], palette.SPEC)
    return canvas.text(labels)
