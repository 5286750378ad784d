"""How figures are written for people, the same on the screen, in `check` and in the reports:
parts per million out of spec, and the decimals a characteristic's readings are shown with."""

from __future__ import annotations

import math
from collections.abc import Iterable

PPM_FLOOR = 0.001  # below this a normal-model tail is noise: shown as "< 0.001"


def fmt_ppm(x: float | None, missing: str = "") -> str:
    """Parts per million in plain digits, never in e-notation: whole numbers with thousands
    separators from 100 on (18,550), three significant digits below (12.3, 0.0457), and
    "< 0.001" for a smaller tail (0 too); `missing` when there is no figure."""
    if x is None or not math.isfinite(x):
        return missing
    if x < PPM_FLOOR:  # a normal tail is never exactly 0, however far it underflows
        return f"< {PPM_FLOOR:g}"
    if x >= 100:
        return f"{x:,.0f}"
    decimals = max(0, 2 - math.floor(math.log10(x)))
    text = f"{x:.{decimals}f}"
    if float(text) >= 100:  # 99.96 rounds up to the next decade
        return f"{x:,.0f}"
    return text


MAX_DECIMALS = 8


def resolution_decimals(values: Iterable[float]) -> int | None:
    """The decimals the gauge writes: the fewest that hold every one of `values` exactly
    (12.012 and 12.01 -> 3); None for no values or finer than MAX_DECIMALS."""
    finite = [v for v in values if math.isfinite(v)]
    if not finite:
        return None
    for d in range(MAX_DECIMALS + 1):
        if all(abs(round(v, d) - v) <= 1e-9 * max(1.0, abs(v)) for v in finite):
            return d
    return None


def reading_decimals(decimals: int | None, lsl: float | None, usl: float | None,
                     sigma: float | None, values: Iterable[float] = ()) -> int | None:
    """How many decimals a characteristic's readings and limits are shown with: the configured
    `decimals` when set; else enough to resolve a hundredth of the tolerance (a ±0.05 mm
    tolerance shows 3 decimals, ten times finer than the 10:1 gauge rule of common practice),
    or with no tolerance a tenth of σ, but never more than the gauge's own resolution seen in
    `values` (a scale writing 500.4 g shows 500.4, not 500.40); None when nothing is known yet
    (then 4 significant digits)."""
    if decimals is not None:
        return decimals
    resolution = resolution_decimals(values)
    if lsl is not None and usl is not None and usl > lsl:
        step = (usl - lsl) / 100
    elif sigma is not None and math.isfinite(sigma) and sigma > 0:
        step = sigma / 10
    else:
        return resolution
    if not math.isfinite(step) or step <= 0:
        return resolution
    needed = min(MAX_DECIMALS, max(0, math.ceil(-math.log10(step) - 1e-9)))
    return needed if resolution is None else min(needed, resolution)


def fmt_reading(value: float | None, decimals: int | None, missing: str = "-") -> str:
    """A reading (or a limit on the readings' scale) with the characteristic's decimals;
    4 significant digits when the decimals are not known."""
    if value is None or not math.isfinite(value):
        return missing
    if decimals is None:
        if value == 0:
            return "0"
        decimals = max(0, 3 - math.floor(math.log10(abs(value))))
    return f"{value:.{decimals}f}"
