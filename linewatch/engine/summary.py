"""Summary figures of one characteristic: location and spread, box-plot figures, capability, trend.

Everything here takes the plotted individual values in order and returns plain dataclasses. Data
never makes these functions raise: a figure that cannot be computed (too few points, zero spread,
a missing spec limit) is None. The distribution functions come from engine/distributions.py (pure
Python), so the `check` path never pays for importing scipy.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Final, TypeVar

import numpy as np

from linewatch.engine.distributions import (
    chi_square_upper_quantile,
    normal_cdf,
    normal_quantile,
    student_t_cdf,
    student_t_quantile,
)

# Quartiles use numpy's "linear" method (Hyndman & Fan type 7, numpy's default); it equals
# statistics.quantiles(method="inclusive").
QUARTILE_METHOD: Final = "linear"
WHISKER_FACTOR = 1.5  # Tukey's fences: 1.5·IQR beyond the quartiles (common practice)
CONFIDENCE = 0.95


_F = TypeVar("_F", bound=Callable[..., Any])


def _quiet(func: _F) -> _F:
    """Run `func` with numpy's floating-point warnings off: extreme data yields None, not noise."""

    @functools.wraps(func)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        with np.errstate(all="ignore"):
            return func(*args, **kwargs)

    return wrapper  # type: ignore[return-value]


def _finite(value: float | None) -> float | None:
    """A plain float, or None for None, NaN and ±inf (JSON has no room for them)."""
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _pair(lo: float | None, hi: float | None) -> tuple[float, float] | None:
    lo, hi = _finite(lo), _finite(hi)
    return None if lo is None or hi is None else (lo, hi)


@dataclass(frozen=True, slots=True)
class Description:
    """Location, spread and box-plot figures of a series; `outliers` holds (index, value)."""

    points: int
    mean: float | None = None
    stdev: float | None = None
    ci95: tuple[float, float] | None = None
    minimum: float | None = None
    q1: float | None = None
    median: float | None = None
    q3: float | None = None
    maximum: float | None = None
    whisker_low: float | None = None
    whisker_high: float | None = None
    outliers: tuple[tuple[int, float], ...] = ()


@dataclass(frozen=True, slots=True)
class Capability:
    """Capability indices against the spec limits, with their 95% intervals and expected ppm out.

    Cp and Pp need both limits; Cpk and Ppk take the nearer of the limits given.
    """

    cp: float | None = None
    cpk: float | None = None
    pp: float | None = None
    ppk: float | None = None
    cp_ci95: tuple[float, float] | None = None
    cpk_ci95: tuple[float, float] | None = None
    cpk_lower95: float | None = None
    ppm_out: float | None = None


@dataclass(frozen=True, slots=True)
class Trend:
    """Least-squares line value = intercept + slope·index over the points (index 0, 1, ...).

    `points_to_spec` is how many more points until the fitted line reaches the spec limit it is
    heading for, when the slope is significant; None otherwise.
    """

    slope: float | None = None
    intercept: float | None = None
    r2: float | None = None
    adj_r2: float | None = None
    p_value: float | None = None
    points_to_spec: int | None = None


@dataclass(frozen=True, slots=True)
class Summary:
    """All summary figures of one characteristic."""

    description: Description
    capability: Capability
    trend: Trend

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready figures for the `summary` record (None where a figure does not exist)."""
        d, c, t = self.description, self.capability, self.trend
        return {
            "points": d.points,
            "mean": d.mean,
            "stdev": d.stdev,
            "ci95": _as_list(d.ci95),
            "min": d.minimum,
            "q1": d.q1,
            "median": d.median,
            "q3": d.q3,
            "max": d.maximum,
            "whisker_low": d.whisker_low,
            "whisker_high": d.whisker_high,
            "outliers": [[i, v] for i, v in d.outliers],
            "cp": c.cp,
            "cpk": c.cpk,
            "pp": c.pp,
            "ppk": c.ppk,
            "cp_ci95": _as_list(c.cp_ci95),
            "cpk_ci95": _as_list(c.cpk_ci95),
            "cpk_lower95": c.cpk_lower95,
            "ppm_out": c.ppm_out,
            "trend_slope": t.slope,
            "trend_r2": t.r2,
            "trend_adj_r2": t.adj_r2,
            "trend_p": t.p_value,
        }


def _as_list(pair: tuple[float, float] | None) -> list[float] | None:
    return None if pair is None else [pair[0], pair[1]]


def _as_array(values: Any) -> np.ndarray:
    """The finite values as a float array (NaN or inf would poison every figure)."""
    x = np.asarray(values, dtype=float).ravel()
    finite = np.isfinite(x)
    return x if finite.all() else x[finite]


def _positions(values: Any) -> tuple[np.ndarray, np.ndarray]:
    """The finite values and their 0-based positions in the series."""
    x = np.asarray(values, dtype=float).ravel()
    finite = np.isfinite(x)
    if finite.all():  # the usual case: no copy of the values, positions 0 .. n-1
        return x, np.arange(x.size)
    where = np.flatnonzero(finite)
    return x[where], where


@_quiet
def describe(values: Any, confidence: float = CONFIDENCE) -> Description:
    """Mean, SD (n − 1), t-interval of the mean, five-number summary, Tukey whiskers, outliers.

    Non-finite values are left out; outlier indices are positions in the series as given.
    """
    x, where = _positions(values)
    n = int(x.size)
    if n == 0:
        return Description(points=0)
    mean = float(np.mean(x))
    stdev = float(np.std(x, ddof=1)) if n >= 2 else None
    ci = None
    if stdev is not None:
        half = student_t_quantile(n - 1, 0.5 + confidence / 2.0) * stdev / math.sqrt(n)
        ci = _pair(mean - half, mean + half)
    q1, median, q3 = (float(q) for q in np.percentile(x, [25, 50, 75], method=QUARTILE_METHOD))
    spread = q3 - q1
    low_fence, high_fence = q1 - WHISKER_FACTOR * spread, q3 + WHISKER_FACTOR * spread
    inside = (x >= low_fence) & (x <= high_fence)
    if not inside.any():  # only when the figures overflow (|values| near 1e308)
        inside[:] = True
    outside = np.flatnonzero(~inside)
    return Description(
        points=n,
        mean=_finite(mean),
        stdev=_finite(stdev),
        ci95=ci,
        minimum=float(x.min()),
        q1=q1,
        median=median,
        q3=q3,
        maximum=float(x.max()),
        whisker_low=float(x[inside].min()),
        whisker_high=float(x[inside].max()),
        outliers=tuple((int(where[i]), float(x[i])) for i in outside),
    )


def _positive(value: float | None) -> float | None:
    value = _finite(value)
    return value if value is not None and value > 0 else None


@_quiet
def capability(
    values: Any,
    sigma_within: float | None,
    lsl: float | None = None,
    usl: float | None = None,
    confidence: float = CONFIDENCE,
) -> Capability:
    """Cp, Cpk (with `sigma_within`, the chart's σ̂ of individuals), Pp, Ppk (overall SD).

    Intervals: Cp by the chi-square interval Ĉp·√(χ²_{α/2,n−1}/(n−1)) .. Ĉp·√(χ²_{1−α/2,n−1}/(n−1));
    Cpk by Bissell (1990), Ĉpk ± z·√(1/(9n) + Ĉpk²/(2(n−1))), and its one-sided lower bound with
    z at `confidence`. These assume σ was estimated with n − 1 degrees of freedom; with σ̂ from
    moving ranges they are the usual approximation. ppm out: normal model, overall mean and SD.
    """
    x = _as_array(values)
    n = int(x.size)
    if (lsl is None and usl is None) or n == 0:
        return Capability()
    if lsl is not None and usl is not None and not lsl < usl:
        return Capability()
    mean = float(np.mean(x))
    overall = _positive(float(np.std(x, ddof=1))) if n >= 2 else None
    within = _positive(sigma_within)

    def indices(sigma: float | None) -> tuple[float | None, float | None]:
        if sigma is None:
            return None, None
        both = (usl - lsl) / (6.0 * sigma) if lsl is not None and usl is not None else None
        sides = []
        if usl is not None:
            sides.append((usl - mean) / (3.0 * sigma))
        if lsl is not None:
            sides.append((mean - lsl) / (3.0 * sigma))
        return _finite(both), _finite(min(sides))

    cp, cpk = indices(within)
    pp, ppk = indices(overall)

    cp_ci = cpk_ci = cpk_lower = None
    if n >= 2:
        alpha = 1.0 - confidence
        df = n - 1
        if cp is not None:
            # chi_square_upper_quantile(df, q) is the chi-square value with upper-tail probability q
            lo = cp * math.sqrt(chi_square_upper_quantile(df, 1.0 - alpha / 2.0) / df)
            hi = cp * math.sqrt(chi_square_upper_quantile(df, alpha / 2.0) / df)
            cp_ci = _pair(lo, hi)
        if cpk is not None:
            se = math.sqrt(1.0 / (9.0 * n) + cpk * cpk / (2.0 * df))
            z2 = normal_quantile(1.0 - alpha / 2.0)
            z1 = normal_quantile(confidence)
            cpk_ci = _pair(cpk - z2 * se, cpk + z2 * se)
            cpk_lower = _finite(cpk - z1 * se)

    ppm = None
    if overall is not None:
        out = 0.0
        if lsl is not None:
            out += normal_cdf((lsl - mean) / overall)
        if usl is not None:
            out += normal_cdf((mean - usl) / overall)
        ppm = _finite(out * 1e6)
    return Capability(
        cp=cp,
        cpk=cpk,
        pp=pp,
        ppk=ppk,
        cp_ci95=cp_ci,
        cpk_ci95=cpk_ci,
        cpk_lower95=cpk_lower,
        ppm_out=ppm,
    )


@_quiet
def trend(
    values: Any,
    lsl: float | None = None,
    usl: float | None = None,
    alpha: float = 0.05,
) -> Trend:
    """Least-squares line over the points, its fit, the slope's two-sided p-value and a projection.

    The projection counts the points after the last one until the fitted line reaches the spec
    limit in the slope's direction (0 if it already has); None when the slope is not significant
    at `alpha` or no limit lies ahead.
    """
    y, where = _positions(values)
    n = int(y.size)
    if n < 2:
        return Trend()
    t = where.astype(float)
    t_mean, y_mean = float(np.mean(t)), float(np.mean(y))
    dt, dy = t - t_mean, y - y_mean
    sxx = float(dt @ dt)
    syy = float(dy @ dy)
    slope = float(dt @ dy) / sxx
    intercept = y_mean - slope * t_mean
    if syy == 0.0:
        return Trend(slope=0.0, intercept=intercept)
    residual = max(syy - slope * slope * sxx, 0.0)
    r2 = min(max(1.0 - residual / syy, 0.0), 1.0)
    if n < 3:
        return Trend(slope=slope, intercept=intercept, r2=r2)
    adj_r2 = 1.0 - (1.0 - r2) * (n - 1) / (n - 2)
    se = math.sqrt(residual / (n - 2) / sxx)
    p_value = 0.0 if se == 0.0 else 2.0 * student_t_cdf(n - 2, -abs(slope / se))
    ahead = None
    if p_value < alpha and slope != 0.0:
        limit = usl if slope > 0 else lsl
        if limit is not None:
            last = intercept + slope * t[-1]
            remaining = (limit - last) / slope
            ahead = max(0, math.ceil(remaining)) if math.isfinite(remaining) else None
    return Trend(
        slope=_finite(slope),
        intercept=_finite(intercept),
        r2=_finite(r2),
        adj_r2=_finite(adj_r2),
        p_value=_finite(p_value),
        points_to_spec=ahead,
    )


@_quiet
def summarize(
    values: Any,
    sigma_within: float | None = None,
    lsl: float | None = None,
    usl: float | None = None,
    alpha: float = 0.05,
) -> Summary:
    """Description, capability and trend of one characteristic's individual values."""
    x = np.asarray(values, dtype=float).ravel()
    return Summary(
        description=describe(x),
        capability=capability(x, sigma_within, lsl, usl),
        trend=trend(x, lsl, usl, alpha),
    )
