"""The spec-margin gauge of one characteristic: where mean ± 3σ sits between LSL and USL."""

from __future__ import annotations

from rich.text import Text

from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import fmt_fixed
from linewatch.faces.tui.glyphs import Glyphs
from linewatch.present.scales import cell_of, padded_span
from linewatch.present.view import CharacteristicView


def gauge_bar(
    mean: float | None,
    sigma: float | None,
    lsl: float | None,
    usl: float | None,
    width: int,
    glyphs: Glyphs,
    style: str = "",
) -> Text:
    """One line: `[` at LSL, `]` at USL, the ±3σ band as `=` and the mean marked.

    The scale spans the spec limits and the band, whichever is wider, so a process spreading
    past a limit shows its band crossing the bracket.
    """
    width = max(5, width)
    if mean is None or sigma is None or (lsl is None and usl is None):
        word = "no spec" if mean is not None else "-"
        return Text(word.center(width), palette.LABEL)
    lo_band, hi_band = mean - 3 * sigma, mean + 3 * sigma
    ends = [v for v in (lsl, usl, lo_band, hi_band) if v is not None]
    lo, hi = padded_span(ends, 0.04)

    def col(v: float) -> int:
        return cell_of(v, lo, hi, width)

    cells = [(" ", "")] * width
    left = col(lsl) if lsl is not None else 0
    right = col(usl) if usl is not None else width - 1
    for c in range(left, right + 1):
        cells[c] = (glyphs.track, palette.LABEL)
    for c in range(col(lo_band), col(hi_band) + 1):
        cells[c] = (glyphs.band, style)
    cells[col(mean)] = (glyphs.mean, style or "bold")
    if lsl is not None:
        cells[left] = ("[", palette.SPEC)
    if usl is not None:
        cells[right] = ("]", palette.SPEC)
    text = Text(end="")
    for ch, st in cells:
        text.append(ch, st)
    return text


def margin_text(cv: CharacteristicView, glyphs: Glyphs) -> str:
    """Distance of the recent mean to the nearer spec limit, in σ, five cells wide (a two-cell
    ASCII σ leaves the number three, so a wide margin drops its decimal)."""
    if cv.margin_sigma is None:
        return "    -"
    room = 5 - len(glyphs.sigma)
    number = f"{cv.margin_sigma:>{room}.1f}"
    if len(number) > room:
        number = f"{cv.margin_sigma:>{room}.0f}"
    return f"{number}{glyphs.sigma}"


def cpk_figures(cv: CharacteristicView, wide: bool) -> Text:
    """Cpk and, after `>`, its 95% lower bound, each coloured against 1.00 / 1.33; a word too
    when there is room, so the judgement survives a monochrome screen."""
    style = palette.cpk_style(cv.cpk)
    text = Text(end="")
    text.append(f"Cpk {fmt_fixed(cv.cpk)}", style)
    if cv.cpk_lower95 is not None:
        text.append(f" >{fmt_fixed(cv.cpk_lower95)}", palette.cpk_style(cv.cpk_lower95))
    word = palette.cpk_word(cv.cpk)
    if wide and word:
        text.append(f" {word}", style)
    return text


def percent(x: float | None, rate: bool) -> str:
    """A proportion as a percentage, a rate per unit as a number."""
    if x is None:
        return "-"
    return f"{x:.3g}" if rate else f"{100 * x:.2g}%" if x < 0.1 else f"{100 * x:.3g}%"


def attribute_gauge(cv: CharacteristicView, width: int, glyphs: Glyphs) -> Text:
    """Two lines for an attribute characteristic: the newest proportion (or rate) on a bar
    from 0 with its centre and its limit, then the figure and that limit in words."""
    a = cv.attribute
    assert a is not None
    rate = a.what != "proportion nonconforming"
    width = max(5, width)
    out = Text(end="")
    if a.last is None or a.ucl is None or a.center is None:
        out.append("-".center(width), palette.LABEL)
        out.append("\nno limits yet", palette.LABEL)
        return out
    beyond = a.last > a.ucl or (a.lcl is not None and a.last < a.lcl)
    style = palette.CPK_POOR if beyond else palette.CPK_GOOD
    top = max(a.ucl * 1.25, a.last * 1.05, 1e-12)

    def col(v: float) -> int:
        return cell_of(v, 0.0, top, width)

    cells = [(glyphs.track, palette.LABEL)] * width
    for c in range(0, col(a.last) + 1):
        cells[c] = (glyphs.band, style)
    cells[col(a.center)] = (glyphs.mean, palette.CENTER)
    cells[col(a.ucl)] = ("|", palette.LIMIT)
    if a.lcl:
        cells[col(a.lcl)] = ("|", palette.LIMIT)
    for ch, st in cells:
        out.append(ch, st)
    name = ("rate " if rate else "fail ") if width >= 22 else ""
    out.append(f"\n{name}{percent(a.last, rate)}", style)
    out.append(f" UCL {percent(a.ucl, rate)}", palette.LIMIT)
    return out


def margin_gauge(cv: CharacteristicView, width: int, glyphs: Glyphs, wide: bool = False) -> Text:
    """Two lines for the board: the bar with the margin in σ, then Cpk with its lower bound;
    for attribute data the proportion (or rate) against its limit."""
    if cv.attribute is not None:
        return attribute_gauge(cv, width, glyphs)
    style = palette.cpk_style(cv.cpk)
    bar = gauge_bar(cv.recent_mean, cv.recent_sigma, cv.lsl, cv.usl, width - 6, glyphs, style)
    out = Text(end="")
    out.append_text(bar)
    out.append(" " + margin_text(cv, glyphs), palette.LABEL)
    out.append("\n")
    out.append_text(cpk_figures(cv, wide))
    return out
