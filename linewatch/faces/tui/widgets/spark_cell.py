"""A two-line overview cell: a sparkline of recent points over a row of pattern marks.

The bars are drawn here, as Textual's one-line sparkline draws them (one bar per point, the bar
from the point's place between the lowest and the highest, its colour blended from low to high)
but without its per-bar renderables and fractions: a board redraw builds dozens of these.
"""

from __future__ import annotations

from collections.abc import Sequence

from rich.color import Color
from rich.console import Console, ConsoleOptions, RenderResult
from rich.measure import Measurement
from rich.segment import Segment
from rich.style import Style
from rich.text import Text

from linewatch.faces.tui import palette
from linewatch.faces.tui.glyphs import Glyphs
from linewatch.present.scales import fraction_of


def _blend(low: Color, high: Color, ratio: float) -> Style:
    """The colour `ratio` (0..1) of the way from `low` to `high`, as a style (cached: a board
    draws many bars of the same few hundred colours)."""
    assert low.triplet is not None and high.triplet is not None
    (r1, g1, b1), (r2, g2, b2) = low.triplet, high.triplet
    key = (int(r1 + (r2 - r1) * ratio), int(g1 + (g2 - g1) * ratio),
           int(b1 + (b2 - b1) * ratio))
    style = _STYLES.get(key)
    if style is None:
        if len(_STYLES) > 4096:
            _STYLES.clear()
        style = _STYLES[key] = Style.from_color(Color.from_rgb(*key))
    return style


_STYLES: dict[tuple[int, int, int], Style] = {}
_LOW, _HIGH = Color.parse(palette.SPARK_LOW), Color.parse(palette.SPARK_HIGH)


class SparkCell:
    """The last `width` points, one bar each, with its pattern mark under every signalling point
    (`marks`: the chart's letters, present.marks).

    One bar per point (never bucketed) so a marker sits exactly under its point; fewer points than
    the width are right-aligned so the newest point is always at the right edge.
    """

    def __init__(
        self, values: Sequence[float], marks: Sequence[str], width: int, glyphs: Glyphs
    ) -> None:
        self.width = max(1, width)
        self.values = [float(v) for v in values[-self.width :]]
        tail = list(marks[-len(self.values) :]) if self.values else []
        self.marks = tail + [""] * (len(self.values) - len(tail))
        self.glyphs = glyphs

    def _bars(self) -> list[Segment]:
        n = len(self.values)
        if n == 0:
            return [Segment(" " * self.width)]
        pad = [Segment(" " * (self.width - n))] if n < self.width else []
        if n == 1:
            return [*pad, Segment(self.glyphs.spark_bars[3], Style.parse(palette.SPARK_HIGH))]
        # each bar shows where its point sits between the lowest and the highest (0..1, with
        # arithmetic that cannot overflow on extreme values): bar k of the eight for k/7 ..
        bars = self.glyphs.spark_bars
        top = len(bars) - 1
        lo, hi = min(self.values), max(self.values)
        out = pad
        for v in self.values:
            f = fraction_of(v, lo, hi)
            out.append(Segment(bars[int(f * top)], _blend(_LOW, _HIGH, f)))
        return out

    def markers(self) -> Text:
        """The marker row on its own (also what the tests read)."""
        text = Text(" " * (self.width - len(self.values)), end="")
        for mark in self.marks:
            text.append(mark or " ", palette.SIGNAL if mark else "")
        return text

    def to_text(self) -> Text:
        """Both lines as one Text, rendered once: a table redraw then costs no sparkline maths."""
        bars = Text(end="")
        for seg in self._bars():
            bars.append(seg.text, seg.style)
        bars.append("\n")
        bars.append_text(self.markers())
        return bars

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        yield self.to_text()

    def __rich_measure__(self, console: Console, options: ConsoleOptions) -> Measurement:
        return Measurement(self.width, self.width)

