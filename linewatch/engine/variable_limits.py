"""X̄-S and X̄-R limits for subgroups of varying size (stepped limits).

Phase I estimates two figures from the baseline subgroups, the grand mean and σ̂ of individual
values; every point's limits then follow from its own size n_i by the standard-given formulas of
`limits.given_limits` (one definition of limits from a centre and σ):

- x̿ = Σ n_i·x̄_i / Σ n_i (a subgroup of one value counts in it).
- X̄-S (the default with varying sizes, common practice): the pooled
  s̄ = √(Σ (n_i − 1)·s_i² / (Σ n_i − m)) over the m subgroups of two or more values
  (Montgomery, X̄ and s charts with variable sample size). Pooled variances estimate σ² itself,
  so s̄ is taken as σ̂ (its bias is below 1% from about 30 degrees of freedom). Our convention:
  the S chart's centre is c4(n_i)·s̄ (the expected SD of a subgroup of n_i) with limits
  (c4 ± 3√(1 − c4²))(n_i)·s̄ = B3(n_i)·c4(n_i)·s̄ … B4(n_i)·c4(n_i)·s̄, and the X̄ chart is
  x̿ ± 3·s̄/√n_i = x̿ ± A3(n_i)·c4(n_i)·s̄. Applying A3, B3, B4 to the pooled s̄ directly, as
  the textbook prints it, treats s̄ as c4·σ and widens the X̄ limits to 3/c4(n_i) σ of the mean
  (false-alarm rate 0.14% at n = 5, 0.02% at n = 2 instead of 0.27%); the simulation test
  holds these limits to 0.27%.
- X̄-R (when asked for): σ̂ = mean of R_i/d2(n_i); X̄ chart x̿ ± 3σ̂/√n_i; R chart centre
  d2(n_i)·σ̂, limits max(0, d2 − 3d3)(n_i)·σ̂ … (d2 + 3d3)(n_i)·σ̂ (our convention).
Standard given (centre C, σ S): the same per-n formulas with C and S.

With equal sizes throughout, the fixed-size path (`limits.estimate_limits`: s̄ the plain mean of
the s_i, σ̂ = s̄/c4) stays the one that charts complete consecutive subgroups; the two estimates
of σ differ by sampling error only.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import isfinite, sqrt

import numpy as np

from linewatch.domain.errors import BadLimits, NotEnoughData
from linewatch.domain.records import CHART_RANGE, CHART_STDEV, CHART_XBAR
from linewatch.engine import constants as k
from linewatch.engine.limits import MIN_BASELINE, given_limits
from linewatch.engine.stepped import StepLimits, SteppedSeries
from linewatch.engine.subgroups import SubgroupStats

SOURCE_BASELINE = "baseline"
SOURCE_GIVEN = "given"
_D2_BY_SIZE = np.array([np.nan] * k.MIN_N + [k.d2(n) for n in range(k.MIN_N, k.MAX_N + 1)])


@dataclass(frozen=True, slots=True)
class SizeModel:
    """What the limits of every subgroup size follow from: centre and σ̂ of individual values."""

    center: float
    sigma: float
    dispersion: str  # "stdev" or "range"
    source: str  # "baseline" or "given"

    @property
    def charts(self) -> tuple[str, str]:
        return CHART_XBAR, CHART_RANGE if self.dispersion == "range" else CHART_STDEV

    def _per_size(self, sizes: np.ndarray, location: bool) -> StepLimits:
        n = np.asarray(sizes, dtype=np.int64)
        out = [np.zeros(n.shape[0]) for _ in range(4)]
        for size in np.unique(n).tolist():
            lim = given_limits(self.center, self.sigma, int(size), self.dispersion)
            chart = lim.location if location else lim.dispersion
            where = n == size
            for arr, figure in zip(out, (chart.center, chart.sigma, chart.ucl, chart.lcl),
                                   strict=True):
                arr[where] = figure
        return StepLimits(*out)

    def location_steps(self, sizes: np.ndarray) -> StepLimits:
        """X̄ chart limits for subgroups of these sizes (1..25): centre ± 3σ̂/√n."""
        return self._per_size(sizes, location=True)

    def dispersion_steps(self, sizes: np.ndarray) -> StepLimits:
        """S or R chart limits for subgroups of these sizes (2..25)."""
        n = np.asarray(sizes, dtype=np.int64)
        if n.shape[0] and n.min() < k.MIN_N:
            raise ValueError("a subgroup of one value has no dispersion point")
        return self._per_size(n, location=False)


def _checked(model: SizeModel) -> SizeModel:
    if not (isfinite(model.center) and isfinite(model.sigma)):
        raise BadLimits(
            f"limits are not finite numbers (sigma within {model.sigma:g}, centre "
            f"{model.center:g}): values too extreme to chart"
        )
    return model


def given_model(center: float, sigma: float, dispersion: str) -> SizeModel:
    """Standard given: the known centre and σ of individual values."""
    if not sigma > 0:
        raise NotEnoughData(f"sigma must be more than 0, got {sigma}")
    return _checked(SizeModel(float(center), float(sigma), dispersion, SOURCE_GIVEN))


def estimate_model(stats: SubgroupStats, dispersion: str, baseline: int | None = None
                   ) -> SizeModel:
    """Phase I: x̿ and σ̂ from the first `baseline` subgroups (all when None)."""
    b = stats.sizes.shape[0] if baseline is None else min(baseline, stats.sizes.shape[0])
    n = stats.sizes[:b]
    multi = n >= k.MIN_N
    m = int(multi.sum())
    if m < MIN_BASELINE:
        raise NotEnoughData(
            f"too few subgroups for limits: {m} of two or more values in the baseline, "
            f"{MIN_BASELINE} needed"
        )
    with np.errstate(all="ignore"):
        center = float(np.sum(n * stats.means[:b]) / np.sum(n))
        if dispersion == "range":
            d2 = _D2_BY_SIZE[n[multi]]
            sigma = float(np.mean(stats.ranges[:b][multi] / d2))
        else:
            nm = n[multi]
            sd = stats.sds[:b][multi]
            sigma = sqrt(float(np.sum((nm - 1) * sd * sd)) / float(np.sum(nm) - m))
    if isfinite(sigma) and not sigma > 0:
        raise NotEnoughData(
            "sigma estimated as 0 from the baseline (every subgroup has no spread); "
            "more varied data or --center/--sigma is needed"
        )
    return _checked(SizeModel(center, sigma, dispersion, SOURCE_BASELINE))


def variable_charts(stats: SubgroupStats, model: SizeModel) -> tuple[SteppedSeries, SteppedSeries]:
    """The X̄ chart (every subgroup) and the S or R chart (subgroups of two or more values) with
    the limits of each point's size."""
    loc_name, disp_name = model.charts
    idx = np.arange(stats.sizes.shape[0])
    loc = SteppedSeries(loc_name, stats.means, stats.sizes, idx, stats.rows,
                        model.location_steps(stats.sizes))
    keep = stats.sizes >= k.MIN_N
    values = stats.ranges if model.dispersion == "range" else stats.sds
    disp = SteppedSeries(disp_name, values[keep], stats.sizes[keep], idx[keep],
                         stats.rows[keep], model.dispersion_steps(stats.sizes[keep]))
    return loc, disp
