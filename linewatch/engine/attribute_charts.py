"""Attribute charts: p, np, c, u and Laney's p′ and u′, with stepped limits for varying sizes.

Montgomery (Introduction to Statistical Quality Control, control charts for attributes):
- p: p̄ = Σd_i / Σn_i; limits p̄ ± 3√(p̄(1 − p̄)/n_i), clipped to [0, 1].
- np (one subgroup size n throughout): n·p̄ ± 3√(n·p̄(1 − p̄)), LCL at least 0.
- c: c̄ = mean count; c̄ ± 3√c̄, LCL at least 0.
- u: ū = Σc_i / Σn_i (n_i in inspection units); ū ± 3√(ū/n_i), LCL at least 0.
Laney (Quality Engineering 14(4), 2002): p′ and u′ are the p and u charts with σ_i multiplied
by σ_z (`laney.py`), estimated from the baseline's standardised points.
Standard given: the known p̄, c̄ or ū replaces the estimate (a Laney chart still takes σ_z from
the baseline, around the given centre). Every chart is judged through z_i (`stepped.py`).
"""

from __future__ import annotations

from dataclasses import dataclass
from math import isfinite, sqrt

import numpy as np

from linewatch.domain.errors import ChartDataError, NotEnoughData
from linewatch.domain.records import (
    ATTRIBUTE_CHARTS,
    CHART_C,
    CHART_LANEY_P,
    CHART_LANEY_U,
    CHART_NP,
    CHART_P,
    CHART_U,
)
from linewatch.engine.laney import Dispersion, judge_dispersion
from linewatch.engine.limits import MIN_BASELINE
from linewatch.engine.stepped import StepLimits, SteppedSeries, standardise, symmetric_steps

PROPORTION_CHARTS = (CHART_P, CHART_NP, CHART_LANEY_P)  # binomial model: counts ≤ sizes
LANEY_CHARTS = (CHART_LANEY_P, CHART_LANEY_U)
SOURCE_BASELINE = "baseline"
SOURCE_GIVEN = "given"


@dataclass(frozen=True, slots=True)
class AttributeModel:
    """What an attribute chart's limits follow from. `center` is p̄ (also for np), c̄ or ū;
    `sigma_z` is Laney's factor (1 for the plain charts); `size` the one n of an np chart."""

    chart: str
    center: float
    source: str
    sigma_z: float = 1.0
    size: int | None = None

    def steps(self, sizes: np.ndarray) -> StepLimits:
        """Per-point centre, σ and limits for subgroups of these sizes."""
        n = np.asarray(sizes, dtype=float)
        c = self.center
        match self.chart:
            case "p" | "laney-p":
                sigma = np.sqrt(c * (1.0 - c) / n) * self.sigma_z
                return symmetric_steps(np.full(n.shape, c), sigma, 0.0, 1.0)
            case "np":
                return symmetric_steps(n * c, np.sqrt(n * c * (1.0 - c)), 0.0, n)
            case "c":
                return symmetric_steps(np.full(n.shape, c), np.full(n.shape, sqrt(c)), 0.0)
            case "u" | "laney-u":
                sigma = np.sqrt(c / n) * self.sigma_z
                return symmetric_steps(np.full(n.shape, c), sigma, 0.0)
        raise ValueError(f"unknown attribute chart {self.chart!r}")


def plotted(chart: str, counts: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """The plotted statistic: d_i/n_i (p, p′), d_i (np), c_i (c), c_i/n_i (u, u′)."""
    d = np.asarray(counts, dtype=float)
    if chart in (CHART_NP, CHART_C):
        return d.copy()
    values: np.ndarray = d / np.asarray(sizes, dtype=float)
    return values


def check_data(chart: str, counts: np.ndarray, sizes: np.ndarray) -> None:
    """ChartDataError naming the first subgroup the chart cannot take, and why."""
    if chart not in ATTRIBUTE_CHARTS:
        raise ChartDataError(f"unknown attribute chart {chart!r}")
    d = np.asarray(counts, dtype=float)
    n = np.asarray(sizes, dtype=float)
    if d.shape != n.shape:
        raise ChartDataError(f"{d.shape[0]} counts but {n.shape[0]} sizes")

    def first(bad: np.ndarray, why: str) -> None:
        if np.any(bad):
            i = int(np.flatnonzero(bad)[0])
            raise ChartDataError(f"subgroup {i + 1}: {why} (count {d[i]:g}, size {n[i]:g})")

    first(~np.isfinite(d) | (d < 0) | (d != np.floor(d)), "a count must be a whole number ≥ 0")
    if chart == CHART_C:
        return
    first(~np.isfinite(n) | (n <= 0), "the size must be more than 0")
    if chart in PROPORTION_CHARTS:
        first(n != np.floor(n), "the number of units inspected must be a whole number")
        first(d > n, "more nonconforming units than units inspected")
    if chart == CHART_NP and n.shape[0] and np.any(n != n[0]):
        raise ChartDataError(
            f"an np chart needs one subgroup size throughout; here sizes run from {n.min():g} "
            f"to {n.max():g}: use the p chart (--chart p) for varying sizes"
        )


def _center_estimate(chart: str, d: np.ndarray, n: np.ndarray) -> float:
    if chart == CHART_C:
        return float(d.mean())
    return float(d.sum() / n.sum())


def _usable_center(chart: str, center: float, given: bool) -> float:
    """`center` when a chart can be drawn around it; NotEnoughData saying why otherwise."""
    what = "--center" if given else "the baseline"
    if chart in PROPORTION_CHARTS:
        if not 0.0 < center < 1.0:
            raise NotEnoughData(
                f"a proportion of {center:g} from {what}: limits need a proportion strictly "
                "between 0 and 1" + ("" if given else "; give a known one with --center")
            )
    elif not (center > 0.0 and isfinite(center)):
        raise NotEnoughData(
            f"a mean count of {center:g} from {what}: limits need more than 0"
            + ("" if given else "; give a known one with --center")
        )
    return center


def given_attribute(chart: str, center: float, size: int | None = None,
                    sigma_z: float = 1.0) -> AttributeModel:
    """Standard given: the known p̄ (also for np), c̄ or ū."""
    return AttributeModel(chart, _usable_center(chart, float(center), True), SOURCE_GIVEN,
                          sigma_z, size)


def estimate_attribute(chart: str, counts: np.ndarray, sizes: np.ndarray,
                       baseline: int | None = None, center: float | None = None
                       ) -> tuple[AttributeModel, Dispersion]:
    """Phase I from the first `baseline` subgroups (all when None), or around a given `center`.

    Also returns the verdict on σ_z of the baseline (for p and u: whether a Laney chart fits
    better; for p′ and u′ the σ_z their limits use).
    """
    d = np.asarray(counts, dtype=float)
    n = np.ones(d.shape) if chart == CHART_C else np.asarray(sizes, dtype=float)
    check_data(chart, d, n)
    b = d.shape[0] if baseline is None else min(baseline, d.shape[0])
    if b < MIN_BASELINE:
        raise NotEnoughData(
            f"too few subgroups for limits: {b} in the baseline, {MIN_BASELINE} needed"
        )
    given = center is not None
    estimate = _center_estimate(chart, d[:b], n[:b]) if center is None else float(center)
    c = _usable_center(chart, estimate, given)
    size = int(n[0]) if chart == CHART_NP else None
    plain_chart = {CHART_LANEY_P: CHART_P, CHART_LANEY_U: CHART_U}.get(chart, chart)
    plain = AttributeModel(plain_chart, c, SOURCE_GIVEN if given else SOURCE_BASELINE, 1.0, size)
    verdict = judge_dispersion(standardise(plotted(chart, d[:b], n[:b]), plain.steps(n[:b])))
    if chart not in LANEY_CHARTS:
        return plain, verdict
    if not (verdict.sigma_z > 0.0 and isfinite(verdict.sigma_z)):
        raise NotEnoughData(
            f"sigma_z estimated as {verdict.sigma_z:g} from the baseline (every subgroup has "
            "the same standardised value); a Laney chart needs varied subgroups"
        )
    return AttributeModel(chart, c, plain.source, verdict.sigma_z, None), verdict


def attribute_chart(chart: str, counts: np.ndarray, sizes: np.ndarray,
                    model: AttributeModel) -> SteppedSeries:
    """The plotted points of an attribute chart with each point's limits."""
    d = np.asarray(counts, dtype=float)
    n = np.ones(d.shape) if chart == CHART_C else np.asarray(sizes, dtype=float)
    check_data(chart, d, n)
    idx = np.arange(d.shape[0])
    return SteppedSeries(chart, plotted(chart, d, n), n, idx, idx, model.steps(n))
