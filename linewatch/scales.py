"""Fitting values onto a drawing: the span to show and where a value lands in it. Shared by the
terminal charts, gauges and box plot and by the report's SVG charts."""

from __future__ import annotations

from collections.abc import Iterable


def padded_span(values: Iterable[float], fraction: float) -> tuple[float, float]:
    """(low, high) around `values` with `fraction` of their range added on each side, so
    nothing sits on the frame; a single value gets a span of 2 around it."""
    vals = list(values)
    lo, hi = min(vals), max(vals)
    if hi == lo:
        lo, hi = lo - 1.0, hi + 1.0
    pad = (hi - lo) * fraction
    return lo - pad, hi + pad


def cell_of(value: float, lo: float, hi: float, cells: int) -> int:
    """The cell (0 .. cells-1, low values first) that `value` falls in on a span lo..hi."""
    return min(cells - 1, max(0, round((value - lo) / (hi - lo) * (cells - 1))))
