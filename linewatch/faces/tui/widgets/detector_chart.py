"""A detector's chart in character cells: the EWMA against its widening limits, or the CUSUM
with C⁺ above and C⁻ below a zero line between +h and −h. The newest points that fit are
shown, one column each (the close-up's location chart shows the same points)."""

from __future__ import annotations

from bisect import bisect_left

from rich.text import Text
from textual.reactive import reactive
from textual.widget import Widget

from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import fmt_value
from linewatch.faces.tui.glyphs import Glyphs
from linewatch.faces.tui.widgets.control_chart import LABEL_WIDTH, _Canvas
from linewatch.present.detector_view import CUSUM_CHART, DetectorChartView
from linewatch.present.scales import fraction_of, padded_span


def draw_detector_chart(chart: DetectorChartView, width: int, height: int,
                        glyphs: Glyphs) -> Text:
    """Render `chart` in `width` x `height` cells: a title row, then the plot with its limits
    named on the right."""
    plot_w = max(5, width - LABEL_WIDTH)
    height = max(4, height)
    title = Text(chart.title[: max(5, width)], "bold")
    n = len(chart.indices)
    if n == 0:
        return Text.assemble(title, "\n", Text("no points yet", palette.LABEL))
    count = min(n, plot_w)
    s = n - count
    cusum = chart.detector == CUSUM_CHART
    ups = chart.upper[s:]
    downs = [-d for d in chart.lower[s:]] if cusum else []
    ucl = chart.ucl[s:]
    lcl = [-x for x in chart.lcl[s:]] if cusum else chart.lcl[s:]
    centre = chart.center[s:]
    lo, hi = padded_span([*ups, *downs, *ucl, *lcl, *centre], 0.04)
    rows = height - 1
    canvas = _Canvas(plot_w, rows)

    def row_of(v: float) -> int:
        return round((1.0 - fraction_of(v, lo, hi)) * (rows - 1))

    step = max(1, min(4, plot_w // count))  # as the location chart spaces its points
    for col in range(min(plot_w, count * step)):
        j = col // step
        canvas.put(row_of(ucl[j]), col, glyphs.hline, palette.LIMIT)
        canvas.put(row_of(lcl[j]), col, glyphs.hline, palette.LIMIT)
        canvas.put(row_of(centre[j]), col, glyphs.center, palette.CENTER)
    indices = chart.indices[s:]
    for start in chart.phase_starts:
        j = bisect_left(indices, start)
        if 0 < j < count:
            for r in range(rows):
                canvas.put(r, j * step - (1 if step > 1 else 0), glyphs.phase, palette.PHASE)
    upper_marks = chart.upper_marks[s:]
    lower_marks = chart.lower_marks[s:] if cusum else []
    for j in range(count):
        if cusum:  # C⁻ first, so C⁺ wins a shared cell at 0
            mark = lower_marks[j] if j < len(lower_marks) else ""
            canvas.put(row_of(downs[j]), j * step, mark or glyphs.point,
                       palette.SIGNAL if mark else palette.POINT)
        mark = upper_marks[j] if j < len(upper_marks) else ""
        canvas.put(row_of(ups[j]), j * step, mark or glyphs.point,
                   palette.SIGNAL if mark else palette.POINT)
    labels: dict[int, Text] = {}
    if cusum:
        names = (("+h", ucl[-1], fmt_value(ucl[-1]), palette.LIMIT),
                 ("0", 0.0, "", palette.CENTER),
                 ("−h", lcl[-1], "", palette.LIMIT))
    else:
        names = (("UCL", ucl[-1], fmt_value(ucl[-1]), palette.LIMIT),
                 ("CL", centre[-1], fmt_value(centre[-1]), palette.CENTER),
                 ("LCL", lcl[-1], fmt_value(lcl[-1]), palette.LIMIT))
    for name, value, words, style in names:
        r = row_of(value)
        if r not in labels:
            labels[r] = Text(f"{name} {words}".strip()[:LABEL_WIDTH - 1], style)
    return Text.assemble(title, "\n", canvas.text(labels))


class DetectorPane(Widget):
    """Draws one detector chart at whatever size the layout gives it."""

    chart: reactive[DetectorChartView | None] = reactive(None, layout=False)

    def __init__(self, glyphs: Glyphs, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.glyphs = glyphs

    def render(self) -> Text:
        if self.chart is None:
            return Text("")
        return draw_detector_chart(self.chart, self.size.width, self.size.height, self.glyphs)
