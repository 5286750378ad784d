"""Exact beyond-limits probability of an attribute chart's points, from the binomial or Poisson.

An attribute chart's 3σ limits are a normal approximation: the real chance that an in-control
point falls outside them is a binomial (p, np) or Poisson (c, u) tail at the centre, and it can
be far from 0.27% (small n·p̄ leaves no lower limit and a lumpy upper tail). Each point's chance
is computed exactly here — the count thresholds found with the same z arithmetic the rules use,
so a count the chart calls "beyond" is exactly one counted here (one on its limit is not) —
and the mean over the points is the expected share of false beyond-limits alarms. Laney's
charts widen the limits for variation the models do not have, so no model tail applies to them
(None).
Tails: P(X ≥ k) = I_p(k, n − k + 1) for X ~ Bin(n, p); P(X ≥ k) = P(k, λ), the regularized
lower incomplete gamma, = P(χ²_{2k} ≤ 2λ) for X ~ Poisson(λ).
"""

from __future__ import annotations

from math import floor, isfinite

import numpy as np

from linewatch.domain.records import CHART_C, CHART_NP, CHART_P, CHART_U
from linewatch.engine.attribute_charts import AttributeModel
from linewatch.engine.distributions import beta_cdf, chi_square_cdf
from linewatch.engine.stepped import Z_LIMIT, standard_point


def _at_least(chart: str, k: int, n: float, model: AttributeModel) -> float:
    """P(count ≥ k) at the model's centre for a subgroup of size n."""
    if k <= 0:
        return 1.0
    if chart in (CHART_P, CHART_NP):
        trials = int(n)
        return 0.0 if k > trials else beta_cdf(k, trials - k + 1, model.center)
    mean = model.center * (1.0 if chart == CHART_C else n)
    return chi_square_cdf(2.0 * k, 2.0 * mean)


def _count_z(chart: str, count: int, n: float, center: float, sigma: float) -> float:
    """z of a count, formed as the chart forms it (statistic first, then standardised)."""
    value = float(count) if chart in (CHART_NP, CHART_C) else count / n
    return standard_point(value, center, sigma)


def point_probability(model: AttributeModel, n: float) -> float | None:
    """Chance that an in-control point of size n is beyond the limits (None for Laney)."""
    chart = model.chart
    if chart not in (CHART_P, CHART_NP, CHART_C, CHART_U):
        return None
    steps = model.steps(np.array([n]))
    center, sigma, ucl, lcl = steps.point(0)
    scale = 1.0 if chart in (CHART_NP, CHART_C) else n
    # smallest count with z > 3, and largest with z < −3, near the limit times the scale
    hi = floor(ucl * scale) if isfinite(ucl * scale) else 0
    hi = max(hi - 2, 0)
    while _count_z(chart, hi, n, center, sigma) <= Z_LIMIT:
        hi += 1
    upper = _at_least(chart, hi, n, model)
    lo = floor(lcl * scale) + 2
    while lo >= 0 and _count_z(chart, lo, n, center, sigma) >= -Z_LIMIT:
        lo -= 1
    lower = 0.0 if lo < 0 else 1.0 - _at_least(chart, lo + 1, n, model)
    return upper + lower


def mean_probability(model: AttributeModel, sizes: np.ndarray) -> float | None:
    """Mean beyond-limits chance over points of these sizes: the expected false-alarm share of
    the beyond-limits test (None where no model tail applies)."""
    n = np.asarray(sizes, dtype=float)
    if model.chart == CHART_C:
        n = np.ones(max(n.shape[0], 1))
    values, counts = np.unique(n, return_counts=True)
    total = 0.0
    for size, count in zip(values.tolist(), counts.tolist(), strict=True):
        p = point_probability(model, size)
        if p is None:
            return None
        total += p * count
    return total / float(counts.sum())


__all__ = ["mean_probability", "point_probability"]
