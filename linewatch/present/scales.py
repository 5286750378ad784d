"""Fitting values onto a drawing: the span to show and where a value lands in it. Shared by the
terminal charts, gauges and box plot and by the report's SVG charts."""

from __future__ import annotations

from collections.abc import Iterable
from math import isfinite

_BIGGEST = 1.7976931348623157e308  # the largest float64


def padded_span(values: Iterable[float], fraction: float) -> tuple[float, float]:
    """(low, high) around `values` with `fraction` of their range added on each side, so
    nothing sits on the frame; a single value gets a span of 2 around it (wider for a huge
    value, so the span never collapses). Non-finite values are left out and the result is
    always finite, even for values near the float maximum."""
    vals = [v for v in values if isfinite(v)]
    if not vals:
        return -1.0, 1.0
    lo, hi = min(vals), max(vals)
    if hi == lo:
        half = max(1.0, abs(lo) * 1e-9)
        lo, hi = lo - half, hi + half
    pad = (hi / 2 - lo / 2) * 2 * fraction  # halves first: hi - lo itself may overflow
    return max(-_BIGGEST, lo - pad), min(_BIGGEST, hi + pad)


def fraction_of(value: float, lo: float, hi: float) -> float:
    """Where `value` sits on lo..hi as 0..1 (clamped), without overflow for any finite inputs
    (the halves never overflow); NaN gives 0."""
    span = hi / 2 - lo / 2
    if not span > 0:
        return 0.0
    f = (value / 2 - lo / 2) / span
    if f != f:  # NaN
        return 0.0
    return min(1.0, max(0.0, f))


def cell_of(value: float, lo: float, hi: float, cells: int) -> int:
    """The cell (0 .. cells-1, low values first) that `value` falls in on a span lo..hi."""
    return round(fraction_of(value, lo, hi) * (cells - 1))
