"""Control limits: Phase I estimation from a baseline, or from a known centre and sigma.

Phase I (no automatic exclusion):
- Individuals: CL = mean, σ̂ = MR̄/d2(2) with MR̄ the mean of the moving ranges inside the
  baseline; MR chart CL = MR̄, UCL = D4(2)·MR̄, LCL = 0.
- X̄-R: σ̂ = R̄/d2(n); R chart D3·R̄ / D4·R̄. X̄-S: σ̂ = s̄/c4(n); S chart B3·s̄ / B4·s̄.
- Location chart: grand mean ± 3σ̂/√n.
Standard given (centre C, σ of individual values S): location C ± 3S/√n; MR and R charts
CL = d2·S, UCL = (d2 + 3d3)·S, LCL = max(0, d2 − 3d3)·S; S chart CL = c4·S,
UCL = (c4 + 3√(1−c4²))·S, LCL = max(0, c4 − 3√(1−c4²))·S.
`sigma` of a chart is the standard deviation of its plotted statistic (zones use it).
"""

from __future__ import annotations

from dataclasses import dataclass
from math import isfinite, sqrt

import numpy as np

from linewatch.domain.errors import BadLimits, NotEnoughData
from linewatch.domain.records import DISPERSION_CHARTS
from linewatch.engine import constants as k
from linewatch.engine.charts import chart_names

MIN_BASELINE = 2


@dataclass(frozen=True, slots=True)
class ChartLimits:
    """Limits of one chart. `sigma` is the SD of the plotted statistic."""

    chart: str
    center: float
    ucl: float
    lcl: float
    sigma: float

    @property
    def asymmetric(self) -> bool:
        """Dispersion charts are judged against UCL/LCL, not symmetric zones."""
        return self.chart in DISPERSION_CHARTS


@dataclass(frozen=True, slots=True)
class LimitSet:
    """Location and dispersion limits plus the σ̂ of individual values they imply."""

    location: ChartLimits
    dispersion: ChartLimits
    sigma_within: float
    source: str  # "baseline" or "given"


def _dispersion_from_sigma(chart: str, n: int, s: float) -> ChartLimits:
    """MR/R/S chart limits for a known σ of individual values."""
    if chart == "stdev":
        c = k.c4(n)
        spread = sqrt(1.0 - c * c)
        return ChartLimits(chart, c * s, (c + 3 * spread) * s, max(0.0, c - 3 * spread) * s,
                           spread * s)
    m = 2 if chart == "moving-range" else n
    return ChartLimits(chart, k.d2(m) * s, k.d2_upper(m) * s, k.d1_lower(m) * s, k.d3(m) * s)


def given_limits(
    center: float, sigma: float, subgroup_size: int, dispersion: str
) -> LimitSet:
    """Limits from a known centre and σ of individual values (standard given)."""
    if not sigma > 0:
        raise NotEnoughData(f"sigma must be more than 0, got {sigma}")
    loc_name, disp_name = chart_names(subgroup_size, dispersion)
    n = subgroup_size
    s_loc = sigma / sqrt(n)
    loc = ChartLimits(loc_name, center, center + 3 * s_loc, center - 3 * s_loc, s_loc)
    return _finite(LimitSet(loc, _dispersion_from_sigma(disp_name, n, sigma), sigma, "given"))


def estimate_limits(
    location_values: np.ndarray,
    dispersion_values: np.ndarray,
    subgroup_size: int,
    dispersion: str,
) -> LimitSet:
    """Phase I limits from baseline points.

    `location_values` are the baseline's plotted location points (individuals or subgroup means);
    `dispersion_values` the dispersion points inside the baseline (for individuals, the moving
    ranges between consecutive baseline points).
    """
    loc_name, disp_name = chart_names(subgroup_size, dispersion)
    loc_vals = np.asarray(location_values, dtype=float)
    disp_vals = np.asarray(dispersion_values, dtype=float)
    if loc_vals.shape[0] < MIN_BASELINE or disp_vals.shape[0] < 1:
        raise NotEnoughData(
            f"too few points for limits: {loc_vals.shape[0]} plotted, {MIN_BASELINE} needed"
        )
    center = float(loc_vals.mean())
    disp_bar = float(disp_vals.mean())
    n = subgroup_size
    if disp_name == "stdev":
        sigma = disp_bar / k.c4(n)
        disp = ChartLimits(disp_name, disp_bar, k.b4(n) * disp_bar, k.b3(n) * disp_bar,
                           sigma * sqrt(1.0 - k.c4(n) ** 2))
    else:
        m = 2 if disp_name == "moving-range" else n
        sigma = disp_bar / k.d2(m)
        disp = ChartLimits(disp_name, disp_bar, k.d4_upper(m) * disp_bar,
                           k.d3_lower(m) * disp_bar, k.d3(m) * sigma)
    if isfinite(sigma) and not sigma > 0:  # (a NaN or infinite σ̂ is for _finite to report)
        raise NotEnoughData(
            "sigma estimated as 0 from the baseline (every baseline value is the same); "
            "more varied data or --center/--sigma is needed"
        )
    s_loc = sigma / sqrt(n)
    loc = ChartLimits(loc_name, center, center + 3 * s_loc, center - 3 * s_loc, s_loc)
    return _finite(LimitSet(loc, disp, sigma, "baseline"))


def _finite(limits: LimitSet) -> LimitSet:
    """`limits` when every figure is a finite number; else BadLimits (an overflow from extreme
    values must never become a NaN or infinite limit in the store or on a chart)."""
    figures = [limits.sigma_within]
    for c in (limits.location, limits.dispersion):
        figures += [c.center, c.ucl, c.lcl, c.sigma]
    if all(isfinite(f) for f in figures):
        return limits
    raise BadLimits(
        f"limits are not finite numbers (sigma within {limits.sigma_within:g}, centre "
        f"{limits.location.center:g}): values too extreme to chart"
    )
