"""A one-line box plot of recent points against the spec limits, outliers marked, with a scale."""

from __future__ import annotations

from rich.text import Text

from linewatch.ui import palette
from linewatch.ui.figures import BoxFigures, box_figures
from linewatch.ui.formatting import fmt_value
from linewatch.ui.glyphs import Glyphs


def draw_box_plot(
    values: list[float], lsl: float | None, usl: float | None, width: int, glyphs: Glyphs
) -> Text:
    """Line 1: whiskers, box, median, outliers, `[` LSL and `]` USL. Line 2: the scale's ends and
    the limits. Line 3: the figures in words."""
    fig = box_figures(values)
    if fig is None:
        return Text("no points yet", palette.LABEL)
    width = max(20, width)
    ends = [fig.low_whisker, fig.high_whisker, *fig.outliers]
    ends += [v for v in (lsl, usl) if v is not None]
    lo, hi = min(ends), max(ends)
    if hi == lo:
        lo, hi = lo - 1.0, hi + 1.0
    pad = (hi - lo) * 0.03
    lo, hi = lo - pad, hi + pad

    def col(v: float) -> int:
        return min(width - 1, max(0, round((v - lo) / (hi - lo) * (width - 1))))

    cells = [(" ", "")] * width
    for c in range(col(fig.low_whisker), col(fig.high_whisker) + 1):
        cells[c] = (glyphs.whisker, palette.LABEL)
    for c in range(col(fig.q1), col(fig.q3) + 1):
        cells[c] = (glyphs.box_fill, "cyan")
    cells[col(fig.q1)] = (glyphs.box_edge, "bold cyan")
    cells[col(fig.q3)] = (glyphs.box_edge, "bold cyan")
    cells[col(fig.median)] = (glyphs.median, "bold white")
    for v in fig.outliers:
        cells[col(v)] = (glyphs.outlier, palette.SIGNAL)
    if lsl is not None:
        cells[col(lsl)] = ("[", palette.SPEC)
    if usl is not None:
        cells[col(usl)] = ("]", palette.SPEC)
    out = Text(end="")
    for ch, st in cells:
        out.append(ch, st)
    out.append("\n")
    out.append_text(_scale_line(lo, hi, lsl, usl, width))
    out.append("\n")
    out.append_text(_figures_line(fig))
    return out


def _scale_line(lo: float, hi: float, lsl: float | None, usl: float | None, width: int) -> Text:
    left = f"LSL {fmt_value(lsl)}" if lsl is not None else fmt_value(lo)
    right = f"USL {fmt_value(usl)}" if usl is not None else fmt_value(hi)
    gap = max(1, width - len(left) - len(right))
    return Text(f"{left}{' ' * gap}{right}", palette.LABEL)


def _figures_line(fig: BoxFigures) -> Text:
    out = Text(
        f"Q1 {fmt_value(fig.q1)}  median {fmt_value(fig.median)}  Q3 {fmt_value(fig.q3)}  "
        f"whiskers {fmt_value(fig.low_whisker)}..{fmt_value(fig.high_whisker)}  ",
        palette.LABEL,
    )
    if fig.outliers:
        shown = ", ".join(fmt_value(v) for v in fig.outliers[:4])
        more = f" +{len(fig.outliers) - 4}" if len(fig.outliers) > 4 else ""
        out.append(f"outliers {len(fig.outliers)}: {shown}{more}", palette.SIGNAL)
    else:
        out.append("no outliers")
    return out
