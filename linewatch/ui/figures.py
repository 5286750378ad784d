"""Display-side statistics the close-up needs: a least-squares trend and box-plot figures.

These are small numpy helpers kept in the UI until `linewatch.engine.summary` offers the same
figures; then the close-up should call the engine and these go away.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, slots=True)
class Trend:
    """Least-squares line through the last `n` points, x = point number within the window."""

    n: int
    slope: float
    intercept: float
    r2: float
    adj_r2: float
    p_value: float

    def fitted_last(self) -> float:
        """The line's value at the newest point."""
        return self.intercept + self.slope * (self.n - 1)


@dataclass(frozen=True, slots=True)
class Projection:
    """Points until the fitted line reaches a spec limit, if the slope heads towards one."""

    limit_name: str
    limit: float
    points: float


@dataclass(frozen=True, slots=True)
class BoxFigures:
    """Tukey box-plot figures: quartiles, 1.5·IQR whiskers and the points beyond them."""

    q1: float
    median: float
    q3: float
    low_whisker: float
    high_whisker: float
    outliers: list[float]


def trend(values: list[float] | np.ndarray) -> Trend | None:
    """Slope, R², adjusted R² and the slope's two-sided p-value; None with fewer than 3 points."""
    y = np.asarray(values, dtype=float)
    n = y.size
    if n < 3:
        return None
    x = np.arange(n, dtype=float)
    xm, ym = x.mean(), y.mean()
    sxx = float(((x - xm) ** 2).sum())
    syy = float(((y - ym) ** 2).sum())
    sxy = float(((x - xm) * (y - ym)).sum())
    slope = sxy / sxx
    intercept = ym - slope * xm
    if syy == 0.0:
        return Trend(n, 0.0, float(intercept), 0.0, 0.0, 1.0)
    r2 = min(1.0, sxy * sxy / (sxx * syy))
    adj = 1.0 - (1.0 - r2) * (n - 1) / (n - 2)
    sse = max(0.0, syy - slope * sxy)
    df = n - 2
    if sse == 0.0:
        p = 0.0
    else:
        from scipy.special import stdtr  # lazy: only the close-up needs it

        t = slope / math.sqrt(sse / df / sxx)
        p = float(2.0 * stdtr(df, -abs(t)))
    return Trend(n, float(slope), float(intercept), float(r2), float(adj), p)


def project_to_spec(
    fit: Trend, lsl: float | None, usl: float | None, alpha: float = 0.05
) -> Projection | None:
    """Where the trend meets the spec limit it heads for, when the slope is significant."""
    if fit.p_value >= alpha or fit.slope == 0.0:
        return None
    now = fit.fitted_last()
    if fit.slope > 0 and usl is not None:
        return Projection("USL", usl, max(0.0, (usl - now) / fit.slope))
    if fit.slope < 0 and lsl is not None:
        return Projection("LSL", lsl, max(0.0, (lsl - now) / fit.slope))
    return None


def box_figures(values: list[float] | np.ndarray) -> BoxFigures | None:
    """Quartiles by linear interpolation (numpy's default), whiskers at the furthest points
    within 1.5·IQR of the box (Tukey's convention, common practice)."""
    y = np.asarray(values, dtype=float)
    if y.size == 0:
        return None
    q1, med, q3 = (float(v) for v in np.percentile(y, [25, 50, 75]))
    iqr = q3 - q1
    lo_fence, hi_fence = q1 - 1.5 * iqr, q3 + 1.5 * iqr
    inside = y[(y >= lo_fence) & (y <= hi_fence)]
    outliers = sorted(float(v) for v in y[(y < lo_fence) | (y > hi_fence)])
    return BoxFigures(q1, med, q3, float(inside.min()), float(inside.max()), outliers)
