"""A widget that draws one control chart at whatever size the layout gives it."""

from __future__ import annotations

from rich.text import Text
from textual.widget import Widget

from linewatch.faces.tui.glyphs import Glyphs
from linewatch.faces.tui.widgets.control_chart import draw_control_chart
from linewatch.present.view import ChartView


class ChartPane(Widget):
    """Holds a ChartView (and optional spec limits and cursor); redraws on `show` or resize."""

    def __init__(self, glyphs: Glyphs, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.glyphs = glyphs
        self.chart: ChartView | None = None
        self.lsl: float | None = None
        self.usl: float | None = None
        self.cursor: int | None = None
        self.decimals: int | None = None

    def show(self, chart: ChartView | None, lsl: float | None = None, usl: float | None = None,
             cursor: int | None = None, decimals: int | None = None) -> None:
        self.chart, self.lsl, self.usl, self.cursor = chart, lsl, usl, cursor
        self.decimals = decimals
        self.refresh()

    def render(self) -> Text:
        if self.chart is None:
            return Text("no chart yet")
        return draw_control_chart(self.chart, self.size.width, self.size.height, self.glyphs,
                                  self.lsl, self.usl, self.cursor, self.decimals)
