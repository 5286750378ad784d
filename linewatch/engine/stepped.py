"""Stepped limits (one centre, σ and pair of limits per point) and the standardised statistic.

When subgroup sizes vary, every point has its own limits. The run rules are not rewritten for
that: a point is turned into z = (statistic − centre) / σ of that point, and the z series is
judged against centre 0, σ 1 and limits ±3 by the existing evaluators (`rules.py` for history,
`stream.py` live), so zones step with the limits. Judging z against ±kσ is judging the
statistic against its own centre ± kσ_i (a z within rounding of an edge is set to the edge). A
limit clipped at a natural bound (0 below for a range, SD or count, 1 above for a proportion)
never disagrees with ±3 either: the statistic cannot pass the bound, and that side's ±3 lies
beyond it.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from math import isfinite

import numpy as np

from linewatch.engine.limits import ChartLimits
from linewatch.engine.rulebook import RuleSpec
from linewatch.engine.rules import classify, evaluate_classified
from linewatch.engine.setup import limit_state

Z_LIMIT = 3.0  # the limits of the standardised chart, in σ of the plotted statistic
_ROUNDING = 8 * 2.220446049250313e-16  # a few units in the last place of each operand


@dataclass(frozen=True, slots=True)
class StepLimits:
    """Per-point centre line, σ of the plotted statistic, and control limits (parallel arrays)."""

    center: np.ndarray
    sigma: np.ndarray
    ucl: np.ndarray
    lcl: np.ndarray

    def __len__(self) -> int:
        return int(self.center.shape[0])

    @property
    def varies(self) -> bool:
        """Whether the limits step (differ between points)."""
        return bool(len(self)) and bool(
            np.any(self.ucl != self.ucl[0]) or np.any(self.lcl != self.lcl[0])
            or np.any(self.center != self.center[0])
        )

    def point(self, i: int) -> tuple[float, float, float, float]:
        """(centre, σ, UCL, LCL) of point `i`."""
        return (float(self.center[i]), float(self.sigma[i]), float(self.ucl[i]),
                float(self.lcl[i]))


def symmetric_steps(center: np.ndarray, sigma: np.ndarray, lower: float = -np.inf,
                    upper: float | np.ndarray = np.inf) -> StepLimits:
    """centre ± 3σ per point, each limit clipped to the statistic's natural range [lower, upper]
    (`upper` may differ per point: an np chart's count cannot pass its n)."""
    c = np.asarray(center, dtype=float)
    s = np.asarray(sigma, dtype=float)
    c, s = np.broadcast_arrays(c, s)
    ucl = np.minimum(c + Z_LIMIT * s, upper)
    lcl = np.maximum(c - Z_LIMIT * s, lower)
    return StepLimits(c.copy(), s.copy(), ucl, lcl)


def standardise(values: np.ndarray, steps: StepLimits) -> np.ndarray:
    """z_i = (value_i − centre_i) / σ_i: the chart the run rules judge when limits step.

    A z within rounding error of a zone edge or limit (±1, ±2, ±3) is set to it, so a point
    exactly on its limit (a count of 230 in 400 against 0.5 + 3·0.025) stays "on the limit, not
    beyond" as the rules' convention says, whatever the last bit of the division."""
    v = np.asarray(values, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        z = (v - steps.center) / steps.sigma
        edge = np.round(z)
        slack = _ROUNDING * ((np.abs(v) + np.abs(steps.center)) / steps.sigma + np.abs(z))
        snap = (np.abs(edge) <= Z_LIMIT) & (np.abs(z - edge) <= slack)
    out: np.ndarray = np.where(snap, edge, z)
    return out


def standard_point(value: float, center: float, sigma: float) -> float:
    """z of one live point, edges snapped alike (the scalar twin of `standardise`)."""
    z = (value - center) / sigma
    if not isfinite(z):
        return z
    edge = round(z)
    slack = _ROUNDING * ((abs(value) + abs(center)) / sigma + abs(z))
    return float(edge) if abs(edge) <= Z_LIMIT and abs(z - edge) <= slack else z


def z_limits(chart: str) -> ChartLimits:
    """The limits the standardised series of `chart` is judged against: centre 0, σ 1, ±3
    (a dispersion chart keeps its name, so only its beyond-limits test applies)."""
    return ChartLimits(chart, 0.0, Z_LIMIT, -Z_LIMIT, 1.0)


@dataclass(frozen=True, slots=True)
class SteppedSeries:
    """One chart's plotted points with their sizes and per-point limits. `indices` are the
    subgroup positions (a dispersion chart skips subgroups of one value, so they can jump);
    `rows` the position of each subgroup's last value in the input."""

    chart: str
    values: np.ndarray
    sizes: np.ndarray
    indices: np.ndarray
    rows: np.ndarray
    limits: StepLimits

    def __len__(self) -> int:
        return int(self.values.shape[0])

    def z(self) -> np.ndarray:
        """The standardised points the run rules judge."""
        return standardise(self.values, self.limits)


def evaluate_stepped(series: SteppedSeries, specs: Iterable[RuleSpec]) -> dict[str, np.ndarray]:
    """Where each rule fires on a chart with stepped limits: the existing evaluator over z_i
    against centre 0, σ 1, ±3 (one bool per point, keyed by rule id)."""
    z = series.z()
    st = limit_state(z_limits(series.chart))
    side, level = classify(z, st.center, st.sigma, st.ucl, st.lcl)
    return {s.id: evaluate_classified(s, z, side, level) for s in specs}
