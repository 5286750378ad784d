"""A one-line box plot of recent points against the spec limits, outliers marked, with a scale."""

from __future__ import annotations

from rich.text import Text

from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import fmt_scaled, fmt_value
from linewatch.faces.tui.glyphs import Glyphs
from linewatch.present.figures import fmt_reading
from linewatch.present.scales import cell_of, padded_span
from linewatch.present.view import BoxFigures


def draw_box_plot(
    fig: BoxFigures | None, lsl: float | None, usl: float | None, width: int, glyphs: Glyphs,
    decimals: int | None = None,
) -> Text:
    """Line 1: whiskers, box, median, outliers, `[` LSL and `]` USL. Line 2: the scale's ends and
    the limits. Line 3: the figures in words. `fig`: Tukey's figures as the read model computes
    them (present.close_up). `decimals`: the characteristic's (figures.reading_decimals)."""
    if fig is None:
        return Text("no points yet", palette.LABEL)
    outliers = list(fig.outliers)
    width = max(20, width)
    ends = [fig.whisker_low, fig.whisker_high, *outliers]
    ends += [v for v in (lsl, usl) if v is not None]
    lo, hi = padded_span(ends, 0.03)

    def col(v: float) -> int:
        return cell_of(v, lo, hi, width)

    cells = [(" ", "")] * width
    for c in range(col(fig.whisker_low), col(fig.whisker_high) + 1):
        cells[c] = (glyphs.whisker, palette.LABEL)
    for c in range(col(fig.q1), col(fig.q3) + 1):
        cells[c] = (glyphs.box_fill, palette.BOX)
    cells[col(fig.q1)] = (glyphs.box_edge, palette.BOX_EDGE)
    cells[col(fig.q3)] = (glyphs.box_edge, palette.BOX_EDGE)
    cells[col(fig.median)] = (glyphs.median, palette.MEDIAN)
    for v in outliers:
        cells[col(v)] = (glyphs.outlier, palette.SIGNAL)
    if lsl is not None:
        cells[col(lsl)] = ("[", palette.SPEC)
    if usl is not None:
        cells[col(usl)] = ("]", palette.SPEC)
    out = Text(end="")
    for ch, st in cells:
        out.append(ch, st)
    out.append("\n")
    out.append_text(_scale_line(lo, hi, lsl, usl, width, decimals))
    out.append("\n")
    out.append_text(_figures_line(fig, outliers, decimals))
    return out


def _scale_line(lo: float, hi: float, lsl: float | None, usl: float | None, width: int,
                decimals: int | None) -> Text:
    def f(v: float) -> str:
        return fmt_value(v) if decimals is None else fmt_reading(v, decimals)

    left = f"LSL {f(lsl)}" if lsl is not None else f(lo)
    right = f"USL {f(usl)}" if usl is not None else f(hi)
    gap = max(1, width - len(left) - len(right))
    return Text(f"{left}{' ' * gap}{right}", palette.LABEL)


def _figures_line(fig: BoxFigures, outliers: list[float], decimals: int | None) -> Text:
    spread = fig.stdev or (fig.q3 - fig.q1) or None

    def f(v: float | None) -> str:
        return fmt_scaled(v, spread) if decimals is None else fmt_reading(v, decimals)

    out = Text(
        f"Q1 {f(fig.q1)}  median {f(fig.median)}  Q3 {f(fig.q3)}  "
        f"whiskers {f(fig.whisker_low)}..{f(fig.whisker_high)}  ",
        palette.LABEL,
    )
    if outliers:
        shown = ", ".join(f(v) for v in outliers[:4])
        more = f" +{len(outliers) - 4}" if len(outliers) > 4 else ""
        out.append(f"outliers {len(outliers)}: {shown}{more}", palette.SIGNAL)
    else:
        out.append("no outliers")
    return out
