"""False-alarm budget: published in-control ARLs, closed forms, the chain against the evaluator."""

from __future__ import annotations

import math
import subprocess
import sys
from dataclasses import replace

import numpy as np
import pytest
from scipy import stats

from linewatch.engine.batch import analyse_history
from linewatch.engine.budget.automata import automaton
from linewatch.engine.budget.chain import MARKOV, markov_run_length
from linewatch.engine.budget.rates import (
    SIMULATED,
    alarm_rate,
    average_run_length,
    rule_set_key,
    zigzag,
)
from linewatch.engine.budget.simulation import (
    SIMULATION,
    SIMULATION_LOWER_BOUND,
    first_signals,
    simulate_run_length,
)
from linewatch.engine.rulebook import RULES, RuleSpec, parse_rule_list, resolve_rules
from linewatch.engine.rules import classify, evaluate
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stream import ChartLimitsState, ChartRules


def rules(*ids: str) -> list[RuleSpec]:
    return [RULES[i] for i in ids]


# --- published and closed-form values ---------------------------------------------------------


@pytest.mark.parametrize(
    ("ids", "published", "printed_decimals"),
    [
        # Champ & Woodall, Technometrics 29(4), 1987, zero-state ARL of Shewhart charts with
        # supplementary runs rules. 91.75 for all four rules; the others quoted from memory.
        (("we1",), 370.4, 1),
        (("we1", "we2", "we3", "we4"), 91.75, 2),
        (("we1", "we2"), 225.4, 1),
        (("we1", "we3"), 166.1, 1),
        (("we1", "we4"), 152.7, 1),
    ],
)
def test_markov_chain_reproduces_published_arl(
    ids: tuple[str, ...], published: float, printed_decimals: int
):
    result = average_run_length(rules(*ids))
    assert result.method == MARKOV
    assert result.std_error is None
    assert round(result.arl, printed_decimals) == published


def test_one_side_run_of_nine_is_two_to_the_ninth_minus_one():
    # Each point lies on one side with probability 1/2 (on the line: probability 0), so the
    # expected wait for 9 in a row on one side is 2⁹ − 1 = 511 (common practice).
    assert average_run_length(rules("n2")).arl == pytest.approx(511.0, rel=1e-12)


@pytest.mark.parametrize("length", [2, 5, 7, 8, 12])
def test_side_runs_of_any_length(length: int):
    specs = resolve_rules(["n2"], {"n2": length})
    assert markov_run_length(specs) == pytest.approx(2.0**length - 1.0, rel=1e-12)


def test_beyond_limits_alone_is_one_over_the_tail_probability():
    # P(|Z| > 3) from scipy.stats.norm: ARL = 1/p for a geometric wait (common practice).
    p = 2 * stats.norm.sf(3.0)
    assert markov_run_length(rules("n1")) == pytest.approx(1.0 / p, rel=1e-12)


@pytest.mark.parametrize("length", [3, 8, 15])
def test_within_one_sigma_run_matches_the_success_run_formula(length: int):
    # Mean wait for L successes in a row with success probability p: (1 − p^L)/((1 − p)·p^L)
    # (Feller, An Introduction to Probability Theory, vol. 1, recurrent events; common practice).
    p = stats.norm.cdf(1.0) - stats.norm.cdf(-1.0)
    expected = (1 - p**length) / ((1 - p) * p**length)
    specs = resolve_rules(["n7"], {"n7": length})
    assert markov_run_length(specs) == pytest.approx(expected, rel=1e-10)


def test_one_of_m_fires_on_every_point_beyond_its_zone():
    # 1 of m beyond 2σ on one side fires exactly at points beyond 2σ, whatever m: ARL = 1/P(|Z|>2).
    p = 2 * stats.norm.sf(2.0)
    for m in (1, 3, 5):
        spec = RuleSpec("t", "k-of-m", m, k=1, zone=2)
        assert markov_run_length([spec]) == pytest.approx(1.0 / p, rel=1e-10)


def test_k_of_k_is_a_run_beyond_the_zone_on_one_side():
    # 2 of 2 beyond 1σ on one side = 2 in a row beyond 1σ on the same side. Each point is beyond
    # 1σ on a given side with probability q; by first-step analysis from "no run" (t0) and "one
    # point beyond on a side" (t1): t0 = 1 + 2q·t1 + (1 − 2q)·t0, t1 = 1 + q·t1 + (1 − 2q)·t0.
    q = stats.norm.sf(1.0)
    a = np.array([[2 * q, -2 * q], [-(1 - 2 * q), 1 - q]])
    t0, _ = np.linalg.solve(a, np.ones(2))
    spec = RuleSpec("t", "k-of-m", 2, k=2, zone=1)
    assert markov_run_length([spec]) == pytest.approx(t0, rel=1e-10)


def test_repeated_rule_counts_once():
    assert markov_run_length(rules("n1", "we1", "n2")) == pytest.approx(
        markov_run_length(rules("n2", "n1")), rel=1e-12
    )


# --- long-run alarm rate ------------------------------------------------------------------------


def test_alarm_rates_of_simple_rules_match_closed_forms():
    # An alarm starts where a rule fires and did not at the point before (common practice for
    # counting runs): beyond 3σ: p(1 − p); L in a row on one side: exactly L then a break,
    # 2·(1/2)^L·(1/2) = 2^−L; L in a row within 1σ: q^L·(1 − q). p and q from scipy.stats.norm.
    p = 2 * stats.norm.sf(3.0)
    assert alarm_rate(RULES["n1"]) == pytest.approx(p * (1 - p), rel=1e-12)
    for length in (2, 7, 9):
        (spec,) = resolve_rules(["n2"], {"n2": length})
        assert alarm_rate(spec) == pytest.approx(2.0**-length, rel=1e-12)
    q = stats.norm.cdf(1.0) - stats.norm.cdf(-1.0)
    assert alarm_rate(RULES["n7"]) == pytest.approx(q**15 * (1 - q), rel=1e-12)


def test_zigzag_numbers():
    # Euler zigzag numbers A_n (alternating permutations), OEIS A000111; quoted from memory.
    published = [1, 1, 1, 2, 5, 16, 61, 272, 1385, 7936, 50521, 353792, 2702765, 22368256,
                 199360981, 1903757312]  # fmt: skip
    assert [zigzag(n) for n in range(16)] == published


def test_alarm_rates_agree_with_a_long_series_through_the_evaluator():
    # Each rule's exact rate against alarm starts counted on 2,000,000 seeded normal points by the
    # vectorised evaluator; tolerance 4.5 Poisson standard errors (starts are rare and spread out).
    n = 2_000_000
    x = np.random.default_rng(99).standard_normal(n)
    specs = [*ZONE_SPECS, RULES["n3"], RULES["n4"], RuleSpec("trend-4", "trend", 4),
             RuleSpec("alternate-5", "alternate", 5)]  # fmt: skip
    for spec in specs:
        fires = evaluate(spec, x, 0.0, 1.0)
        starts = int(fires[0]) + int(np.count_nonzero(fires[1:] & ~fires[:-1]))
        expected = alarm_rate(spec) * n
        assert abs(starts - expected) < 4.5 * math.sqrt(expected) + 1, spec.id


@pytest.mark.parametrize("text", ["western-electric", "nelson"])
def test_set_rate_matches_alarms_counted_on_a_long_in_control_chart(text: str):
    # The set's false alarms per 1,000 points against a chart that keeps running: 1,000,000
    # seeded in-control individuals through the batch path with known limits (CL 0, σ 1), every
    # maximal stretch of consecutive points at which one rule fires counted as one alarm. The
    # tolerance is 4.5 standard errors from 20 batch means (alarms cluster, so no Poisson SE).
    specs = tuple(resolve_rules(parse_rule_list(text)))
    n, batches = 1_000_000, 20
    x = np.random.default_rng(2024).standard_normal(n)
    setup = ChartSetup("x", 1, "range", specs, None, 0.0, 1.0)
    table = analyse_history(x, setup).table
    on_location = table.chart == 0
    starts = np.zeros(n, np.int64)
    for r in range(len(specs)):
        fired = np.zeros(n, bool)
        fired[table.index[on_location & (table.rule == r)]] = True
        starts += fired & ~np.concatenate(([False], fired[:-1]))
    per_batch = starts.reshape(batches, -1).sum(axis=1)
    counted = int(per_batch.sum())
    se = float(per_batch.std(ddof=1)) * math.sqrt(batches)
    result = average_run_length(specs)
    expected = result.false_alarms_per_1000 * n / 1000
    assert abs(counted - expected) < 4.5 * se, (counted, expected, se)
    # a chart that keeps running sees more alarms than one restarted after each (1000/ARL)
    assert result.false_alarms_per_1000 > 1000 / result.arl


# --- the chain follows the evaluator's conventions point by point -----------------------------


def _symbols(x: np.ndarray) -> np.ndarray:
    side, level = classify(x, 0.0, 1.0)
    return 4 * (side < 0) + (level - 1)


ZONE_SPECS = [
    RULES["n1"],
    RULES["n2"],
    RULES["n5"],
    RULES["n6"],
    RULES["n7"],
    RULES["n8"],
    RuleSpec("short-mixture", "mixture", 3),
    RuleSpec("short-within", "within", 4),
    RuleSpec("side-3", "side-run", 3),
    RuleSpec("3-of-4-zone-2", "k-of-m", 4, k=3, zone=2),
    RuleSpec("2-of-6-zone-1", "k-of-m", 6, k=2, zone=1),
    RuleSpec("1-of-3-zone-3", "k-of-m", 3, k=1, zone=3),
]


@pytest.mark.parametrize("spec", ZONE_SPECS, ids=lambda s: s.id)
def test_rule_automaton_fires_exactly_where_the_evaluator_does(spec: RuleSpec):
    rng = np.random.default_rng(7)
    auto = automaton(spec)
    for _ in range(300):
        # wide spread so that every zone, both sides and long runs all occur
        x = rng.normal(0.0, rng.choice([0.6, 1.3, 2.2]), size=40)
        x += rng.choice([0.0, 1.5, -1.5])
        expected = evaluate(spec, x, 0.0, 1.0)
        state, got = 0, np.zeros(x.size, bool)
        for i, sym in enumerate(_symbols(x)):
            got[i] = auto.fires[state, sym]
            state = auto.next[state, sym]
        assert np.array_equal(got, expected), x


# --- simulation --------------------------------------------------------------------------------


def test_simulation_isolates_each_run():
    # Runs laid end to end must give the same first signal as each run evaluated on its own.
    specs = tuple(rules("n1", "n2", "n3", "n4", "n5", "n6", "n7", "n8"))
    rng = np.random.default_rng(11)
    series = rng.normal(0.0, 0.8, size=(200, 30))
    series[::7, :] = np.linspace(-0.5, 0.5, 30)  # some rising rows: trends at the start
    series[1::7, :] = 0.5  # one-sided rows
    got = first_signals(specs, series)
    for row, first in zip(series, got, strict=True):
        alone = np.zeros(row.size, bool)
        for spec in specs:
            alone |= evaluate(spec, row, 0.0, 1.0)
        hits = np.flatnonzero(alone)
        assert first == (hits[0] if hits.size else -1)


@pytest.mark.parametrize(
    "specs",
    [
        rules("we1", "we2", "we3", "we4"),
        [
            RULES["n1"],
            replace(RULES["n8"], length=3),
            replace(RULES["n7"], length=9),
            replace(RULES["n2"], length=7),
            RuleSpec("3-of-4", "k-of-m", 4, k=3, zone=2),
            RULES["n6"],
        ],
    ],
    ids=["western-electric", "every-zone-kind"],
)
def test_chain_agrees_with_seeded_simulation(specs: list[RuleSpec]):
    exact = markov_run_length(specs)
    sim = simulate_run_length(specs, replicates=4000, seed=5)
    assert sim.method == SIMULATION and sim.std_error is not None
    assert exact is not None
    assert abs(sim.arl - exact) < 4 * sim.std_error


def test_simulated_run_lengths_count_the_signalling_point():
    # 1 of 1 beyond "0σ" on one side fires at the very first point: every run length is 1.
    always = RuleSpec("t", "k-of-m", 1, k=1, zone=0)
    result = simulate_run_length([always], replicates=100, seed=2)
    assert (result.arl, result.std_error) == (1.0, 0.0)
    # two in a row on one side: 2² − 1 = 3 (common practice), small standard error
    pair = simulate_run_length(resolve_rules(["n2"], {"n2": 2}), replicates=4000, seed=2)
    assert pair.std_error is not None and pair.std_error < 0.05
    assert abs(pair.arl - 3.0) < 4 * pair.std_error


def test_order_rules_are_simulated_and_reproducible():
    specs = resolve_rules(parse_rule_list("nelson"))
    first = simulate_run_length(specs, replicates=500, seed=3)
    again = simulate_run_length(specs, replicates=500, seed=3)
    assert first == again
    assert first.method == SIMULATION
    assert average_run_length(specs).method == SIMULATION
    # adding trend and alternation can only shorten the wait of the zone rules alone
    zone_only = markov_run_length([s for s in specs if s.kind not in ("trend", "alternate")])
    assert zone_only is not None
    assert average_run_length(specs).arl < zone_only


@pytest.mark.parametrize("text", ["nelson", "nelson,western-electric"])
def test_stored_simulations_regenerate_exactly(text: str):
    # The stored pairs claim to be the default seeded simulation: regenerate them.
    specs = resolve_rules(parse_rule_list(text))
    stored = SIMULATED[rule_set_key(specs)]
    fresh = simulate_run_length(specs)  # default replicates and seed
    assert (fresh.arl, fresh.std_error) == pytest.approx(stored, rel=1e-12)
    # the same figure whatever the order of the rules
    assert simulate_run_length(specs[::-1]).arl == pytest.approx(stored[0], rel=1e-12)
    # and what `check` reports is that simulation
    result = average_run_length(specs)
    assert (result.arl, result.std_error, result.method) == (fresh.arl, fresh.std_error,
                                                              fresh.method)


@pytest.mark.parametrize("text", ["nelson", "nelson,western-electric"])
def test_simulated_arl_agrees_with_restarted_runs_of_the_incremental_rules(text: str):
    # An independent estimate by another method: 8,000 runs of the point-by-point counters of
    # stream.py (not the vectorised evaluator the simulation uses), each from an empty history
    # until the first signal, on a different seed. The two estimates must agree within 4
    # standard errors of their difference (run lengths are near-geometric, common practice).
    specs = resolve_rules(parse_rule_list(text))
    x = np.random.default_rng(31).standard_normal(2_000_000)
    lengths: list[int] = []
    pos = 0
    for _ in range(8000):
        live = ChartRules(specs, ChartLimitsState(0.0, 1.0))
        start = pos
        while not live.push(float(x[pos])):
            pos += 1
        pos += 1
        lengths.append(pos - start)
    runs = np.array(lengths)
    mean, se = float(runs.mean()), float(runs.std(ddof=1)) / math.sqrt(runs.size)
    result = average_run_length(specs)
    assert result.std_error is not None
    assert abs(result.arl - mean) < 4 * math.hypot(result.std_error, se), (result.arl, mean, se)


def test_unfinished_simulation_is_reported_as_a_lower_bound():
    result = simulate_run_length(resolve_rules(["n4"], {"n4": 40}), replicates=200, seed=1,
                                 max_points=200_000)
    assert result.method == SIMULATION_LOWER_BOUND
    assert result.arl >= 512  # every run went at least past its first block of points


def test_chain_too_large_falls_back_to_simulation():
    specs = resolve_rules(["n6"], {"n6": 30})  # 4 of 30: 3^29 window histories
    assert markov_run_length(specs) is None
    result = average_run_length(specs)
    assert result.method == SIMULATION and math.isfinite(result.arl)


def test_results_are_cached_by_rule_set():
    specs = rules("we1", "we2")
    assert average_run_length(specs) is average_run_length(tuple(specs))


def test_no_rules_never_alarm():
    result = average_run_length([])
    assert result.arl == math.inf and result.false_alarms_per_1000 == 0.0


def test_default_set_needs_no_scipy():
    # Lazy imports keep `check` fast: the default set's chain is solved with numpy alone.
    code = (
        "import sys\n"
        "from linewatch.engine.budget.rates import average_run_length\n"
        "from linewatch.engine.rulebook import parse_rule_list, resolve_rules\n"
        "r = average_run_length(resolve_rules(parse_rule_list('western-electric')))\n"
        "print(round(r.arl, 2), any(m.split('.')[0] == 'scipy' for m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.split() == ["91.75", "False"]
