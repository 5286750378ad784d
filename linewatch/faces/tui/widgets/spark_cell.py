"""A two-line overview cell: Textual's sparkline of recent points over a row of pattern marks."""

from __future__ import annotations

from collections.abc import Sequence

from rich.color import Color
from rich.console import Console, ConsoleOptions, RenderResult
from rich.measure import Measurement
from rich.segment import Segment
from rich.style import Style
from rich.text import Text
from textual.renderables.sparkline import Sparkline

from linewatch.faces.tui import palette
from linewatch.faces.tui.glyphs import Glyphs
from linewatch.present.scales import fraction_of


class _AsciiSparkline(Sparkline[float]):
    """Textual's sparkline drawn with ASCII bars for the Linux console."""

    BARS = "_.-~=+*#"


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

    def _bars(self, console: Console, options: ConsoleOptions) -> list[Segment]:
        n = len(self.values)
        if n == 0:
            return [Segment(" " * self.width)]
        pad = [Segment(" " * (self.width - n))] if n < self.width else []
        if n == 1:
            return [*pad, Segment(self.glyphs.spark_bars[3], Style.parse(palette.SPARK_HIGH))]
        cls = _AsciiSparkline if self.glyphs.ascii else Sparkline
        # the bars show where each point sits between the lowest and the highest: hand the
        # sparkline those places (0..1), since its own arithmetic overflows on extreme values
        lo, hi = min(self.values), max(self.values)
        spark = cls(
            [fraction_of(v, lo, hi) for v in self.values],
            width=n,
            height=1,
            min_color=Color.parse(palette.SPARK_LOW),
            max_color=Color.parse(palette.SPARK_HIGH),
        )
        return [*pad, *console.render(spark, options.update(width=n, height=1))]

    def markers(self) -> Text:
        """The marker row on its own (also what the tests read)."""
        text = Text(" " * (self.width - len(self.values)), end="")
        for mark in self.marks:
            text.append(mark or " ", palette.SIGNAL if mark else "")
        return text

    def to_text(self) -> Text:
        """Both lines as one Text, rendered once: a table redraw then costs no sparkline maths."""
        console = _console()
        bars = Text(end="")
        for seg in self._bars(console, console.options.update(width=self.width)):
            if seg.text != "\n":
                bars.append(seg.text, seg.style)
        bars.append("\n")
        bars.append_text(self.markers())
        return bars

    def __rich_console__(self, console: Console, options: ConsoleOptions) -> RenderResult:
        yield self.to_text()

    def __rich_measure__(self, console: Console, options: ConsoleOptions) -> Measurement:
        return Measurement(self.width, self.width)


_CONSOLE: Console | None = None


def _console() -> Console:
    """An off-screen console with full colour for turning the sparkline into styled text."""
    global _CONSOLE
    if _CONSOLE is None:
        import io

        _CONSOLE = Console(file=io.StringIO(), color_system="truecolor", width=400)
    return _CONSOLE
