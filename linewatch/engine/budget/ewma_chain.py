"""ARL of the EWMA chart by the Markov chain of Lucas & Saccucci (Technometrics 32(1), 1990).

The in-control region of the statistic, (−H, H) with H the asymptotic half-width, is cut into
an odd number of equal cells, each represented by its midpoint (the middle one is the start,
z_0 = 0); a step from c goes into the cell (a, b) with probability
Φ((b − (1 − λ)·c)/λ − μ) − Φ((a − (1 − λ)·c)/λ − μ), and out of the region it signals.

The chart's own limits are the exact time-varying ones (narrower over the first points), so the
first steps use the region (−w_t, w_t) of the t-th point: the chain runs forward step by step
while w_t is below H, then the rest is the stationary chain's expected steps. With
`exact_limits=False` the limits are the asymptotic ones throughout, as in Lucas & Saccucci's
tables. The midpoint error falls as 1/cells², so two grids are combined by Richardson
extrapolation (3 significant digits and more).
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from linewatch.engine.budget.gaussian import normal_cdf_array
from linewatch.engine.detectors.ewma import half_widths
from linewatch.engine.rulebook import EwmaSpec

CELLS = 101  # odd; the finer grid has 2·CELLS + 1
_SETTLED = 1e-9  # limits within this relative distance of H count as the asymptotic ones


def _run_length(spec: EwmaSpec, shift: float, cells: int, exact_limits: bool) -> float:
    lam = spec.lam
    a = 1.0 - lam
    big = spec.asymptotic_half_width
    delta = 2.0 * big / cells
    edges = -big + delta * np.arange(cells + 1)
    mids = -big + delta * (np.arange(cells) + 0.5)
    mids[cells // 2] = 0.0  # exactly the start
    # F[i, j] = P(next z ≤ edges[j] | z = mids[i]); row differences are the cell probabilities
    f = normal_cdf_array((edges[None, :] - a * mids[:, None]) / lam - shift)
    q = np.diff(f, axis=1)
    t = np.linalg.solve(np.eye(cells) - q, np.ones(cells))
    p = np.zeros(cells)
    p[cells // 2] = 1.0
    widths = half_widths(spec, 0, _steps_to_settle(spec)) if exact_limits else np.array([big])
    arl = 1.0  # P(run length > 0)
    for w in widths.tolist():
        if w >= big * (1.0 - _SETTLED):
            break
        # region (−w, w): every edge beyond it is moved onto it
        hi, lo = edges > w, edges < -w
        g = p @ f
        if hi.any():
            g[hi] = p @ normal_cdf_array((w - a * mids) / lam - shift)
        if lo.any():
            g[lo] = p @ normal_cdf_array((-w - a * mids) / lam - shift)
        p = np.diff(g)
        arl += float(p.sum())
    # ARL = Σ_t P(no signal by t). Past the narrow start the chain is stationary: from the last
    # distribution p the remaining terms add up to p·Q·(I − Q)⁻¹·1 = p·(t − 1)
    return arl + float(p @ (t - 1.0))


def _steps_to_settle(spec: EwmaSpec) -> int:
    a = 1.0 - spec.lam
    if a <= 0.0:
        return 1
    # 1 − a^{2i} within _SETTLED of 1 (the limit within _SETTLED/2 of H)
    return math.ceil(math.log(_SETTLED) / (2.0 * math.log(a))) + 2


@lru_cache(maxsize=512)
def ewma_run_length(spec: EwmaSpec, shift: float, exact_limits: bool = True) -> float:
    """ARL of the EWMA chart when the standardised mean is `shift` (exact time-varying limits,
    or the asymptotic ones with `exact_limits=False`)."""
    coarse = _run_length(spec, shift, CELLS, exact_limits)
    fine = _run_length(spec, shift, 2 * CELLS + 1, exact_limits)
    # the error goes as 1/cells²: (2c+1)² vs c²
    r = ((2 * CELLS + 1) / CELLS) ** 2
    return (r * fine - coarse) / (r - 1.0)
