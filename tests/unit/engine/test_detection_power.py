"""Detection power: published ARLs of the CUSUM, EWMA and Shewhart charts at mean shifts, and the
chains checked against simulations of the detectors' own evaluators."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from linewatch.engine.budget.automata import zone_probabilities
from linewatch.engine.budget.chain import MARKOV, markov_run_length
from linewatch.engine.budget.cusum_chain import cusum_run_length, one_sided_run_length
from linewatch.engine.budget.ewma_chain import ewma_run_length
from linewatch.engine.budget.power import (
    BROOK_EVANS,
    LUCAS_SACCUCCI,
    SHIFTS,
    detection_power,
    plotted_shift,
)
from linewatch.engine.budget.simulation import SIMULATION, simulate_run_length
from linewatch.engine.detectors import cusum, ewma
from linewatch.engine.rulebook import (
    RULES,
    CusumSpec,
    EwmaSpec,
    parse_rule_list,
    resolve_detectors,
    resolve_rules,
)


def _sig(x: float, digits: int = 3) -> float:
    """`x` rounded to `digits` significant digits, as tables print it."""
    return round(x, digits - 1 - math.floor(math.log10(abs(x))))


# --- CUSUM: Montgomery, Introduction to Statistical Quality Control, the table of ARLs of the
# two-sided tabular CUSUM with k = 1/2 (h = 4 and h = 5); all values quoted from memory.


@pytest.mark.parametrize(
    ("h", "shift", "published"),
    [(4.0, 0.0, 168.0), (4.0, 1.0, 8.38), (5.0, 0.0, 465.0), (5.0, 1.0, 10.4),
     (4.0, 0.5, 26.6), (4.0, 2.0, 3.34), (5.0, 0.5, 38.0), (5.0, 2.0, 4.01), (5.0, 3.0, 2.57)],
)
def test_cusum_chain_reproduces_the_published_table(h, shift, published):
    assert _sig(cusum_run_length(0.5, h, shift)) == published


def test_cusum_chain_has_converged_to_far_more_than_three_digits():
    # the Richardson-extrapolated chain against a much finer plain chain (Brook & Evans 1972)
    from linewatch.engine.budget.cusum_chain import _one_sided

    fine = _one_sided(0.5, 5.0, 0.0, 0.0, 1600)
    assert one_sided_run_length(0.5, 5.0, 0.0) == pytest.approx(fine, rel=2e-4)


@pytest.mark.parametrize(("spec", "shift"), [(CusumSpec(0.5, 5.0), 0.0), (CusumSpec(0.5, 4.0), 1.0),
                                              (CusumSpec(0.25, 8.0), 0.5)])
def test_cusum_chain_agrees_with_simulating_the_detector(spec, shift):
    # independent check: seeded runs of the detector's own evaluator; within 4 standard errors
    sim = simulate_run_length((), replicates=6000, seed=11, shift=shift, detectors=(spec,))
    assert sim.method == SIMULATION
    assert abs(cusum_run_length(spec.k, spec.h, shift) - sim.arl) < 4 * sim.std_error


def test_head_start_shortens_the_run_to_a_shift_from_the_start():
    # Lucas & Crosier, Technometrics 24(3), 1982: with a head start of h/2 the CUSUM (k = ½,
    # h = 5) detects a 1σ shift present from the start in about 6.35 points instead of 10.4,
    # while its in-control ARL stays near 430 (quoted from memory)
    power = detection_power([], [CusumSpec(0.5, 5.0, 2.5)], (0.0, 1.0))
    assert all(p.method == SIMULATION for p in power)
    assert abs(power[1].arl - 6.35) < 4 * power[1].std_error
    assert abs(power[0].arl - 430) < 4 * power[0].std_error


# --- EWMA: Lucas & Saccucci, Technometrics 32(1), 1990, in-control ARLs with asymptotic limits
# (quoted from memory)


@pytest.mark.parametrize(
    ("lam", "width", "published"),
    [(0.1, 2.814, 500.0), (0.2, 2.962, 500.0), (0.1, 2.7, 369.0)],
)
def test_ewma_chain_reproduces_lucas_and_saccucci(lam, width, published):
    assert _sig(ewma_run_length(EwmaSpec(lam, width), 0.0, exact_limits=False)) == published


def test_ewma_chain_has_converged_to_three_digits():
    from linewatch.engine.budget.ewma_chain import _run_length

    spec = EwmaSpec(0.1, 2.814)
    fine = _run_length(spec, 0.0, 1601, exact_limits=False)
    assert _sig(ewma_run_length(spec, 0.0, exact_limits=False)) == _sig(fine)
    assert ewma_run_length(spec, 0.0, exact_limits=False) == pytest.approx(fine, rel=5e-4)


@pytest.mark.parametrize(
    ("spec", "shift"),
    [(EwmaSpec(0.2, 2.962), 0.0), (EwmaSpec(0.2, 2.962), 1.0), (EwmaSpec(0.1, 2.7), 0.5),
     (EwmaSpec(0.05, 2.6), 2.0)],
)
def test_ewma_chain_with_exact_limits_agrees_with_simulating_the_detector(spec, shift):
    # the chart's limits are the exact time-varying ones, narrower at the start, so its ARL is
    # below the asymptotic-limit tables; simulating the detector itself checks the chain
    sim = simulate_run_length((), replicates=6000, seed=5, shift=shift, detectors=(spec,))
    assert abs(ewma_run_length(spec, shift) - sim.arl) < 4 * sim.std_error
    assert ewma_run_length(spec, shift) <= ewma_run_length(spec, shift, exact_limits=False)


def test_row_evaluators_of_the_simulation_match_the_detectors_scan():
    x = np.random.default_rng(3).standard_normal((20, 600)) + 0.6
    for spec, module in ((EwmaSpec(0.1, 2.7), ewma), (CusumSpec(0.5, 4.0, 2.0), cusum)):
        rows = module.fired_rows(spec, x)
        for r in range(x.shape[0]):
            trace, _ = module.scan(spec, x[r])
            assert rows[r].tolist() == trace.fired.tolist()


# --- Shewhart and zone rules under a shift


def test_shifted_zone_probabilities_match_scipy():
    for shift in (0.5, 1.0, -2.0):
        p = zone_probabilities(shift)
        cuts = [0.0, 1.0, 2.0, 3.0, np.inf]
        above = [stats.norm.cdf(cuts[i + 1], shift) - stats.norm.cdf(cuts[i], shift)
                 for i in range(4)]
        below = [stats.norm.cdf(-cuts[i], shift) - stats.norm.cdf(-cuts[i + 1], shift)
                 for i in range(4)]
        np.testing.assert_allclose(p, above + below, rtol=1e-10, atol=1e-15)


def test_shewhart_beyond_limits_at_one_sigma():
    # Montgomery (ARL of the Shewhart chart, 3σ limits): 43.9 at a 1σ shift (quoted from
    # memory); equal to 1/(Φ(−2) + Φ(−4)) from scipy (common practice)
    arl = markov_run_length([RULES["we1"]], 1.0)
    assert round(arl, 1) == 43.9
    assert arl == pytest.approx(1 / (stats.norm.cdf(-2) + stats.norm.cdf(-4)), rel=1e-12)


def test_western_electric_rules_at_one_sigma():
    # Champ & Woodall, Technometrics 29(4), 1987: rules 1-4 together about 9.22 at a 1σ shift
    # (quoted from memory); computed exactly by the chain
    arl = markov_run_length([RULES[i] for i in ("we1", "we2", "we3", "we4")], 1.0)
    assert round(arl, 1) == 9.2


def test_the_zone_chain_agrees_with_simulating_the_rules_under_a_shift():
    specs = [RULES[i] for i in ("we1", "we2", "we3", "we4")]
    for shift in (0.5, 1.5):
        sim = simulate_run_length(specs, replicates=6000, seed=2, shift=shift)
        assert abs(markov_run_length(specs, shift) - sim.arl) < 4 * sim.std_error


# --- the table


def test_the_table_takes_the_most_exact_method_for_each_set():
    def methods(text):
        ids = parse_rule_list(text)
        return {p.method for p in detection_power(resolve_rules(ids), resolve_detectors(ids))}

    assert methods("western-electric") == {MARKOV}
    assert methods("cusum") == {BROOK_EVANS}
    assert methods("ewma") == {LUCAS_SACCUCCI}
    assert methods("nelson") == {SIMULATION}  # trend and alternation look at the order
    assert methods("we1,ewma") == {SIMULATION}
    table = detection_power(resolve_rules(["n1"]), [], SHIFTS)
    assert [p.shift for p in table] == list(SHIFTS)
    arls = [p.arl for p in table]
    assert arls == sorted(arls, reverse=True)  # a larger shift is found sooner


def test_small_shifts_are_found_sooner_by_the_detectors_than_by_shewhart():
    # the trade-off the table shows (Lucas & Saccucci 1990; Montgomery): at a 1σ shift EWMA and
    # CUSUM need about 10 points, the Shewhart chart about 44, with fewer false alarms than the
    # Western Electric rules
    we = detection_power(resolve_rules(parse_rule_list("western-electric")), [], (0.0, 1.0))
    n1 = detection_power([RULES["n1"]], [], (1.0,))[0]
    for det in (EwmaSpec(), CusumSpec()):
        zero, one = detection_power([], [det], (0.0, 1.0))
        assert one.arl < 11 < n1.arl
        assert zero.arl > 4 * we[0].arl


def test_shift_of_the_individual_values_in_units_of_the_means():
    # σ of a mean of n is σ/√n (common practice)
    assert plotted_shift(1.0, 4) == 2.0
    assert plotted_shift(0.5, 1) == 0.5
