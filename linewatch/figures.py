"""How figures are written for people, the same on the screen, in `check` and in the reports:
parts per million out of spec, and the decimals a characteristic's readings are shown with."""

from __future__ import annotations

import math

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
