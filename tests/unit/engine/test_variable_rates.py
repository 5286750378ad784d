"""In-control false-alarm rates of stepped X̄-S and X̄-R limits, by seeded simulation.

Limits at ±3σ of a normal statistic are beyond with probability 2(1 − Φ(3)) = 0.27% (common
practice; the figure here from scipy.stats.norm). The S chart's exact rate per size comes from
the chi distribution of s (scipy.stats.chi2: (n − 1)s²/σ² ~ χ²(n − 1)).

Tolerance: 300 000 subgroups give a binomial standard error of √(0.0027·0.9973/300000) ≈ 9.5e-5
on the X̄ rate; the test allows 4.5 of them (4.3e-4). σ̂ estimated from about 1.35 million
degrees of freedom moves the rate by under 2e-5. Reading the textbook's A3(n_i) on the pooled s̄
literally would give about 0.15% for these sizes, over 10 standard errors away (the last test).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import stats as sps

from linewatch.engine import constants as k
from linewatch.engine.subgroups import subgroup_stats
from linewatch.engine.variable_limits import estimate_model, variable_charts

SUBGROUPS = 300_000
RATE = float(2 * sps.norm.sf(3.0))
TOLERANCE = 4.5 * math.sqrt(RATE * (1 - RATE) / SUBGROUPS)


def _history(seed: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    sizes = rng.integers(1, 11, size=SUBGROUPS)  # 1..10 values, singles included
    return rng.normal(50.0, 2.0, size=int(sizes.sum())), sizes


def _share_beyond(values: np.ndarray, lower: np.ndarray, upper: np.ndarray) -> float:
    return float(np.mean((values > upper) | (values < lower)))


def test_stepped_xbar_s_limits_give_the_normal_rate_for_any_mix_of_sizes():
    values, sizes = _history(20261203)
    stats = subgroup_stats(values, sizes)
    loc, disp = variable_charts(stats, estimate_model(stats, "stdev"))
    assert abs(_share_beyond(loc.values, loc.limits.lcl, loc.limits.ucl) - RATE) < TOLERANCE
    # the S chart: the exact chi-square rate of each point's size, averaged over the points
    expected = 0.0
    for n in range(2, 11):
        df = n - 1
        b5 = max(0.0, k.c4(n) - 3 * math.sqrt(1 - k.c4(n) ** 2))
        b6 = k.c4(n) + 3 * math.sqrt(1 - k.c4(n) ** 2)
        per_point = sps.chi2.sf(df * b6**2, df) + sps.chi2.cdf(df * b5**2, df)
        expected += per_point * np.count_nonzero(disp.sizes == n)
    expected /= len(disp)
    se = math.sqrt(expected * (1 - expected) / len(disp))
    assert abs(_share_beyond(disp.values, disp.limits.lcl, disp.limits.ucl) - expected) < 4.5 * se


def test_stepped_xbar_r_limits_give_the_normal_rate_for_any_mix_of_sizes():
    values, sizes = _history(7)
    stats = subgroup_stats(values, sizes)
    loc, _ = variable_charts(stats, estimate_model(stats, "range"))
    assert abs(_share_beyond(loc.values, loc.limits.lcl, loc.limits.ucl) - RATE) < TOLERANCE


def test_the_literal_textbook_reading_fails_the_same_check():
    # x̿ ± A3(n_i)·s̄ with the pooled s̄ (an estimate of σ, not of c4·σ) is too wide: the check
    # above tells it apart, so it can fail
    values, sizes = _history(20261203)
    stats = subgroup_stats(values, sizes)
    model = estimate_model(stats, "stdev")
    multi = stats.sizes >= 2
    a3 = np.array([k.a3(int(n)) for n in stats.sizes[multi]])
    half = a3 * model.sigma
    share = _share_beyond(stats.means[multi], model.center - half, model.center + half)
    assert RATE - share > 2 * TOLERANCE
