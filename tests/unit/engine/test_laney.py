"""Laney's σ_z and when it differs clearly from 1, by seeded simulation.

Laney, Quality Engineering 14(4), 2002: σ_z = MR̄(z)/1.128 (d2(2)), p′ limits p̄ ± 3σ_pi·σ_z.
The threshold for "differs clearly" is our own; these checks hold it to what it promises: rare
with binomial data, found when the subgroups vary twice as much, and the p′ chart back near the
normal rate (2(1 − Φ(3)) = 0.27%, scipy.stats.norm) where the plain p chart alarms constantly.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats as sps

from linewatch.engine.attribute_charts import attribute_chart, estimate_attribute
from linewatch.engine.laney import RELATIVE_VARIANCE, judge_dispersion, sigma_z


def test_sigma_z_standard_error_matches_simulation():
    rng = np.random.default_rng(3)
    m = 200
    estimates = np.abs(np.diff(rng.standard_normal((20000, m)), axis=1)).mean(axis=1) / 1.128379
    relative_sd = float(estimates.std())
    # 20 000 replicates know the SD to about 0.5%; end effects of m = 200 add about 1%
    assert abs(relative_sd - math.sqrt(RELATIVE_VARIANCE / (m - 1))) < 0.03 * relative_sd
    assert sigma_z(np.array([0.0, 1.1283791670955126])) == pytest.approx(1.0, rel=1e-15)


def _overdispersion_share(rng: np.random.Generator, spread: float, m: int, reps: int) -> float:
    found = 0
    for _ in range(reps):
        sizes = rng.integers(150, 400, m)
        p = np.clip(rng.normal(0.1, spread, m), 0.001, 0.999) if spread else np.full(m, 0.1)
        counts = rng.binomial(sizes, p)
        _, verdict = estimate_attribute("p", counts, sizes)
        found += verdict.kind == "over"
    return found / reps


def test_binomial_data_rarely_suggest_a_laney_chart():
    assert _overdispersion_share(np.random.default_rng(1), 0.0, 25, 2000) < 0.02


def test_twice_the_binomial_spread_is_found_in_50_subgroups():
    # σ_pi ≈ √(0.09/275) ≈ 0.018, so a between-subgroup SD of 0.031 doubles σ_z; with 50
    # subgroups the band is ±0.39 and σ_z's SD about 0.26
    assert _overdispersion_share(np.random.default_rng(2), 0.031, 50, 500) > 0.95


def test_laney_p_prime_brings_an_overdispersed_line_back_near_the_normal_rate():
    rng = np.random.default_rng(4)
    m = 120_000
    # Laney's model: the extra variation is the same in z for every subgroup, near enough when
    # the sizes stay within a quarter of each other (much wider, the z_i become a scale
    # mixture with heavier tails than the normal)
    sizes = rng.integers(4000, 5001, m)
    counts = rng.binomial(sizes, np.clip(rng.normal(0.05, 0.006, m), 0.001, 0.999))
    base = 20_000
    plain, verdict = estimate_attribute("p", counts, sizes, baseline=base)
    prime, _ = estimate_attribute("laney-p", counts, sizes, baseline=base)
    assert verdict.kind == "over" and verdict.suggests_laney
    rate = float(2 * sps.norm.sf(3.0))

    def share(model) -> float:
        c = attribute_chart(model.chart, counts[base:], sizes[base:], model)
        return float(np.mean((c.values > c.limits.ucl) | (c.values < c.limits.lcl)))

    assert share(plain) > 0.1
    # 100 000 points: binomial SE 1.6e-4; σ_z from 20 000 points (relative SE 0.64%) moves the
    # rate by about 1.7e-4: 4 combined SEs
    assert abs(share(prime) - rate) < 4 * math.hypot(1.6e-4, 1.7e-4)


def test_the_verdict_says_which_way_and_suggests_the_laney_chart():
    over = judge_dispersion(np.array([0.0, 3.0] * 20))
    assert over.kind == "over" and "Laney" in over.describe("binomial")
    under = judge_dispersion(np.zeros(40) + np.tile([0.0, 0.1], 20))
    assert under.kind == "under"
    calm = judge_dispersion(np.random.default_rng(0).standard_normal(400))
    assert calm.kind == "" and "allows" in calm.describe("Poisson")
