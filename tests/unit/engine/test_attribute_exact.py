"""Exact intervals and exact beyond-limits chances of attribute charts against scipy.stats, and
their in-control rates by seeded simulation.

scipy.stats.binomtest(...).proportion_ci(method="exact") is the Clopper–Pearson interval;
the exact Poisson interval is checked by its defining tails with scipy.stats.poisson. The
simulation tolerances are 4.5 binomial standard errors of the simulated share.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from linewatch.engine.attribute_budget import mean_probability, point_probability
from linewatch.engine.attribute_capability import (
    NOT_APPLICABLE,
    clopper_pearson,
    poisson_exact,
    proportion_capability,
    rate_capability,
)
from linewatch.engine.attribute_charts import attribute_chart, given_attribute


@pytest.mark.parametrize(("events", "trials"), [(0, 10), (1, 10), (5, 10), (10, 10), (3, 1500),
                                                 (347, 1500), (0, 250000), (17, 250000),
                                                 (99990, 100000)])
def test_clopper_pearson_matches_scipy(events, trials):
    ci = sps.binomtest(events, trials).proportion_ci(confidence_level=0.95, method="exact")
    lo, hi = clopper_pearson(events, trials)
    assert lo == pytest.approx(ci.low, rel=1e-9, abs=1e-300)
    assert hi == pytest.approx(ci.high, rel=1e-9)


@pytest.mark.parametrize("events", [0, 1, 2, 7, 30, 516, 10**5])
def test_exact_poisson_interval_has_its_defining_tails(events):
    lo, hi = poisson_exact(events)
    assert sps.poisson.cdf(events, hi) == pytest.approx(0.025, rel=1e-9)
    if events:
        assert sps.poisson.sf(events - 1, lo) == pytest.approx(0.025, rel=1e-9)
    else:
        assert lo == 0.0


def test_capability_reports_the_overall_figures_with_ppm():
    cap = proportion_capability(17, 250000)
    assert cap.estimate == 17 / 250000
    assert cap.ppm[0] == pytest.approx(68.0)
    assert cap.lower < cap.estimate < cap.upper
    rate = rate_capability(193, 100.0)
    lo, hi = poisson_exact(193)
    assert (rate.estimate, rate.lower, rate.upper) == (1.93, lo / 100, hi / 100)
    assert "do not apply" in NOT_APPLICABLE


def _scipy_beyond(chart: str, center: float, n: float) -> float:
    model = given_attribute(chart, center, size=int(n) if chart == "np" else None)
    _, _, ucl, lcl = model.steps(np.array([n])).point(0)
    k = np.arange(0, 20000)
    if chart in ("p", "np"):
        pmf = sps.binom.pmf(k, int(n), center)
    else:
        pmf = sps.poisson.pmf(k, center * (1 if chart == "c" else n))
    value = k / (1 if chart in ("np", "c") else n)
    return float(pmf[(value > ucl) | (value < lcl)].sum())


@pytest.mark.parametrize(
    ("chart", "center", "n"),
    [("p", 0.2313, 50), ("p", 0.01, 200), ("p", 0.001, 50), ("p", 0.5, 400), ("np", 0.05, 100),
     ("c", 19.85, 1), ("c", 0.7, 1), ("u", 1.93, 5), ("u", 0.02, 37.5), ("u", 4.0, 250)],
)
def test_beyond_limit_chance_matches_the_scipy_distribution(chart, center, n):
    model = given_attribute(chart, center, size=int(n) if chart == "np" else None)
    assert point_probability(model, n) == pytest.approx(_scipy_beyond(chart, center, n),
                                                        rel=1e-9, abs=1e-15)


def test_laney_charts_have_no_model_tail():
    model = given_attribute("laney-p", 0.1, sigma_z=1.8)
    assert point_probability(model, 100) is None
    assert mean_probability(model, np.array([100, 200])) is None


@pytest.mark.parametrize(("chart", "center"), [("p", 0.03), ("u", 0.8)])
def test_in_control_share_beyond_the_limits_is_the_exact_chance(chart, center):
    rng = np.random.default_rng(31)
    sizes = rng.integers(40, 400, 200_000).astype(float)
    if chart == "p":
        counts = rng.binomial(sizes.astype(np.int64), center)
    else:
        sizes = sizes / 50  # inspection units of 50
        counts = rng.poisson(center * sizes)
    model = given_attribute(chart, center)
    series = attribute_chart(chart, counts, sizes, model)
    share = float(np.mean((series.values > series.limits.ucl) |
                          (series.values < series.limits.lcl)))
    expected = mean_probability(model, sizes)
    assert expected is not None
    assert abs(share - expected) < 4.5 * math.sqrt(expected * (1 - expected) / sizes.shape[0])
