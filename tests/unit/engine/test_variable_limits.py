"""X̄-S and X̄-R limits for subgroups of varying size.

Formulas: Montgomery, Introduction to Statistical Quality Control, X̄ and s charts with variable
sample size (x̿ = Σ n_i x̄_i / Σ n_i, pooled s̄ = √(Σ (n_i − 1) s_i² / (Σ n_i − m)); quoted from
memory), recomputed here with the statistics module. Factor values (A3, c4, B5, B6, d2, D1, D2)
are the printed table values (common practice). Data are seeded normal draws.
"""

from __future__ import annotations

import math
import statistics

import numpy as np
import pytest

from linewatch.domain.errors import NotEnoughData
from linewatch.engine.limits import estimate_limits
from linewatch.engine.subgroups import sizes_from_labels, subgroup_stats, subgroup_stats_of
from linewatch.engine.variable_limits import estimate_model, given_model, variable_charts

# table values (common practice): n -> (A3, c4, B5, B6, d2, D1, D2)
TABLE = {
    3: (1.954, 0.8862, 0.0, 2.276, 1.693, 0.0, 4.358),
    5: (1.427, 0.9400, 0.0, 1.964, 2.326, 0.0, 4.918),
    7: (1.182, 0.9594, 0.113, 1.806, 2.704, 0.204, 5.204),
}


def _groups(seed: int = 7) -> list[np.ndarray]:
    rng = np.random.default_rng(seed)
    sizes = rng.choice([3, 5, 7], size=30)
    return [rng.normal(74.0, 0.01, size=int(n)) for n in sizes]


def test_grand_mean_and_pooled_sd_follow_the_variable_size_formulas():
    gs = _groups()
    model = estimate_model(subgroup_stats_of(gs), "stdev")
    total = sum(len(g) for g in gs)
    grand = sum(len(g) * statistics.fmean(g) for g in gs) / total
    pooled = math.sqrt(sum((len(g) - 1) * statistics.variance(g) for g in gs) / (total - len(gs)))
    assert model.center == pytest.approx(grand, rel=1e-12)
    assert model.sigma == pytest.approx(pooled, rel=1e-12)


def test_xbar_and_s_limits_step_with_each_subgroup_size():
    gs = _groups()
    model = estimate_model(subgroup_stats_of(gs), "stdev")
    loc, disp = variable_charts(subgroup_stats_of(gs), model)
    s_bar = model.sigma
    for i, g in enumerate(gs):
        a3, c4, b5, b6, *_ = TABLE[len(g)]
        # X̄: x̿ ± 3 s̄/√n, which is A3(n)·c4(n)·s̄ with the table factors
        assert loc.limits.ucl[i] == pytest.approx(model.center + a3 * c4 * s_bar, abs=5e-4 * s_bar)
        assert loc.limits.lcl[i] == pytest.approx(model.center - 3 * s_bar / math.sqrt(len(g)))
        # S: centre c4(n)·s̄, limits B5(n)·s̄ … B6(n)·s̄
        assert disp.limits.center[i] == pytest.approx(c4 * s_bar, abs=1e-4 * s_bar)
        assert disp.limits.ucl[i] == pytest.approx(b6 * s_bar, abs=1e-3 * s_bar)
        assert disp.limits.lcl[i] == pytest.approx(b5 * s_bar, abs=1e-3 * s_bar)
    assert loc.limits.varies and disp.limits.varies


def test_xbar_r_uses_the_mean_of_r_over_d2_and_d1_d2_per_size():
    gs = _groups(11)
    stats = subgroup_stats_of(gs)
    model = estimate_model(stats, "range")
    sigma = statistics.fmean([(max(g) - min(g)) / TABLE[len(g)][4] for g in gs])
    assert model.sigma == pytest.approx(sigma, rel=1e-3)  # table d2 has four figures
    _, disp = variable_charts(stats, model)
    for i, g in enumerate(gs):
        *_, d2, d1, d2_upper = TABLE[len(g)]
        assert disp.limits.center[i] == pytest.approx(d2 * model.sigma, rel=1e-3)
        assert disp.limits.ucl[i] == pytest.approx(d2_upper * model.sigma, rel=1e-3)
        assert disp.limits.lcl[i] == pytest.approx(d1 * model.sigma, abs=2e-3 * model.sigma)


def test_equal_sizes_give_the_fixed_size_x_bar_r_limits():
    # mean of R_i/d2(n) is R̄/d2(n) when every n is the same
    gs = [g[:5] for g in _groups(3) if len(g) >= 5]
    stats = subgroup_stats_of(gs)
    loc, disp = variable_charts(stats, estimate_model(stats, "range"))
    fixed = estimate_limits(stats.means, stats.ranges, 5, "range")
    for steps, lim in ((loc.limits, fixed.location), (disp.limits, fixed.dispersion)):
        assert steps.center == pytest.approx(np.full(len(gs), lim.center), rel=1e-12)
        assert steps.ucl == pytest.approx(np.full(len(gs), lim.ucl), rel=1e-12)
        assert steps.lcl == pytest.approx(np.full(len(gs), lim.lcl), rel=1e-12, abs=1e-15)


def test_a_subgroup_of_one_is_charted_for_location_only_and_leaves_s_bar_alone():
    gs = _groups()
    with_single = [*gs[:4], np.array([74.02]), *gs[4:]]
    s1 = subgroup_stats_of(with_single)
    m1 = estimate_model(s1, "stdev")
    assert m1.sigma == pytest.approx(estimate_model(subgroup_stats_of(gs), "stdev").sigma)
    loc, disp = variable_charts(s1, m1)
    assert s1.singles.tolist() == [4]
    assert 4 in loc.indices.tolist() and 4 not in disp.indices.tolist()
    assert loc.limits.ucl[4] == pytest.approx(m1.center + 3 * m1.sigma)  # n = 1: ±3σ̂


def test_standard_given_limits_are_c_plus_minus_3s_over_root_n():
    stats = subgroup_stats_of(_groups())
    loc, disp = variable_charts(stats, given_model(74.0, 0.01, "stdev"))
    n = stats.sizes.astype(float)
    assert loc.limits.ucl == pytest.approx(74.0 + 0.03 / np.sqrt(n))
    assert loc.limits.sigma == pytest.approx(0.01 / np.sqrt(n))
    b6 = np.array([TABLE[int(k)][3] for k in stats.sizes])
    assert disp.limits.ucl == pytest.approx(b6 * 0.01, abs=1e-5)


def test_subgroups_by_sample_id_keep_a_short_sample_from_shifting_later_ones():
    # 40 samples of 5 with one unreadable value in the second; the process mean moves by 6σ
    # at sample 29. By id, no range straddles the move; consecutive fives after the lost value
    # put parts from both sides into one subgroup and its range goes beyond the limit.
    rng = np.random.default_rng(2)
    labels = [f"S{i:03d}" for i in range(1, 41) for _ in range(5)]
    values = rng.normal(0.0, 1.0, 200) + np.where(np.arange(200) >= 28 * 5, 6.0, 0.0)
    keep = np.ones(200, dtype=bool)
    keep[7] = False  # a reading of S002
    labels_kept = [lab for lab, k in zip(labels, keep, strict=True) if k]
    model = given_model(0.0, 1.0, "range")
    by_id = subgroup_stats(values[keep], sizes_from_labels(labels_kept))
    assert by_id.sizes.shape[0] == 40 and by_id.sizes[1] == 4
    _, disp = variable_charts(by_id, model)
    assert not np.any(disp.values > disp.limits.ucl)
    consecutive = subgroup_stats(values[keep][:195], np.full(39, 5))
    _, shifted = variable_charts(consecutive, model)
    assert np.any(shifted.values > shifted.limits.ucl)


def test_too_few_subgroups_or_no_spread_are_refused_with_a_reason():
    with pytest.raises(NotEnoughData, match="2 needed"):
        estimate_model(subgroup_stats_of([[1.0, 2.0], [3.0]]), "stdev")
    with pytest.raises(NotEnoughData, match="sigma estimated as 0"):
        estimate_model(subgroup_stats_of([[1.0, 1.0], [2.0, 2.0, 2.0]]), "range")
    with pytest.raises(NotEnoughData, match="more than 0"):
        given_model(1.0, 0.0, "stdev")
