"""A widget that draws one control chart at whatever size the layout gives it."""

from __future__ import annotations

from rich.text import Text
from textual.reactive import reactive
from textual.widget import Widget

from linewatch.faces.tui.glyphs import Glyphs
from linewatch.faces.tui.widgets.control_chart import draw_control_chart
from linewatch.present.view import ChartView


class ChartPane(Widget):
    """Draws its ChartView (with optional spec limits and cursor); any change repaints it."""

    chart: reactive[ChartView | None] = reactive(None, layout=False)
    lsl: reactive[float | None] = reactive(None, layout=False)
    usl: reactive[float | None] = reactive(None, layout=False)
    cursor: reactive[int | None] = reactive(None, layout=False)
    decimals: reactive[int | None] = reactive(None, layout=False)

    def __init__(self, glyphs: Glyphs, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.glyphs = glyphs

    def show(self, chart: ChartView | None, lsl: float | None = None, usl: float | None = None,
             cursor: int | None = None, decimals: int | None = None) -> None:
        """Set what to draw; the repaints these changes ask for are made once."""
        self.chart, self.lsl, self.usl, self.cursor = chart, lsl, usl, cursor
        self.decimals = decimals

    def render(self) -> Text:
        if self.chart is None:
            return Text("no chart yet")
        return draw_control_chart(self.chart, self.size.width, self.size.height, self.glyphs,
                                  self.lsl, self.usl, self.cursor, self.decimals)
