"""Each stated convention of the run rules, pinned on small hand-made series.

Rule parameters: Nelson, J. Quality Technology 16(4), 1984; Western Electric, Statistical Quality
Control Handbook, 1956. The edge conventions (points on a limit, on the centre line, ties) are
the ones linewatch states in its docs; CL = 0 and σ = 1 throughout, so values are z-scores.
"""

from __future__ import annotations

import numpy as np
import pytest

from linewatch.engine.batch import analyse_history
from linewatch.engine.rulebook import RULES, parse_rule_list, resolve_rules
from linewatch.engine.rules import evaluate
from linewatch.engine.setup import ChartSetup


def fires(rule: str, values, **lengths) -> list[int]:
    spec = resolve_rules([rule], lengths)[0]
    return np.flatnonzero(evaluate(spec, np.array(values, dtype=float), 0.0, 1.0)).tolist()


def test_a_point_exactly_on_a_limit_is_not_beyond():
    assert fires("n1", [3.0, -3.0]) == []
    assert fires("we1", [3.0000001, -3.0000001]) == [0, 1]


def test_a_point_on_the_centre_line_breaks_a_one_side_run():
    assert fires("we4", [0.5] * 7 + [0.0] + [0.5]) == []
    assert fires("we4", [0.5] * 8) == [7]


def test_a_run_test_fires_at_every_point_where_a_long_enough_run_ends():
    # a run of 11 on one side fires n2 at its 9th, 10th and 11th points
    assert fires("n2", [-0.2] * 11) == [8, 9, 10]


def test_run_lengths_are_adjustable():
    # some customers ask for 7 in a row on one side
    assert fires("n2", [0.3] * 7, n2=7) == [6]


def test_a_trend_of_six_is_six_points_with_five_increases():
    assert fires("n3", [0.1, 0.2, 0.3, 0.4, 0.5, 0.6]) == [5]
    assert fires("n3", [0.6, 0.5, 0.4, 0.3, 0.2]) == []
    assert fires("n3", [0.6, 0.5, 0.4, 0.3, 0.2, 0.1]) == [5]


def test_an_equal_neighbour_breaks_a_trend():
    assert fires("n3", [0.1, 0.2, 0.3, 0.3, 0.4, 0.5, 0.6]) == []


def test_fourteen_alternating_points_fire_and_thirteen_do_not():
    zigzag = [0.5 if i % 2 else -0.5 for i in range(14)]
    assert fires("n4", zigzag) == [13]
    assert fires("n4", zigzag[:13]) == []


def test_an_equal_neighbour_breaks_alternation():
    zigzag = [0.5 if i % 2 else -0.5 for i in range(16)]
    zigzag[5] = zigzag[4]
    assert fires("n4", zigzag) == []


@pytest.mark.parametrize("rule", ["n5", "we2"])
def test_two_of_three_beyond_two_sigma_on_one_side(rule):
    assert fires(rule, [2.5, 0.0, 2.5]) == [2]
    assert fires(rule, [2.5, -2.5, 2.5]) == [2]
    # exactly 2σ is not beyond 2σ
    assert fires(rule, [2.0, 2.5, 0.0]) == []
    # fewer than m points so far: the window is all points so far
    assert fires(rule, [2.5, 2.5]) == [1]
    # the current point must itself be beyond
    assert fires(rule, [-2.5, -2.5, 0.0]) == [1]


@pytest.mark.parametrize("rule", ["n6", "we3"])
def test_four_of_five_beyond_one_sigma_on_one_side(rule):
    assert fires(rule, [1.5, 1.5, 0.0, 1.5, 1.5]) == [4]
    assert fires(rule, [1.5, 1.5, -1.5, 1.5, 1.5]) == [4]
    assert fires(rule, [1.0, 1.5, 1.5, 1.5, 0.0]) == []


def test_fifteen_within_one_sigma_counts_points_on_one_sigma_as_within():
    hugging = [1.0, -1.0, 0.0, 0.5, -0.5] * 3
    assert fires("n7", hugging) == [14]
    assert fires("n7", [*hugging[:14], 1.01]) == []


def test_eight_beyond_one_sigma_needs_points_on_both_sides():
    mixed = [1.5, -1.5] * 4
    assert fires("n8", mixed) == [7]
    assert fires("n8", [1.5] * 8) == []
    assert fires("n8", [1.5] * 7 + [1.0]) == []


def test_sets_expand_to_their_rules_in_order():
    assert parse_rule_list("nelson") == [f"n{i}" for i in range(1, 9)]
    assert parse_rule_list("western-electric,n3") == ["we1", "we2", "we3", "we4", "n3"]
    assert set(parse_rule_list("nelson,western-electric")) == set(RULES)


def test_dispersion_charts_get_only_the_beyond_limits_test():
    rng = np.random.default_rng(7)  # a seeded normal series, large enough to trip zone rules
    x = rng.normal(0, 1, 400)
    x[200:] += np.linspace(0, 3, 200)
    setup = ChartSetup("x", 1, "range", tuple(resolve_rules(parse_rule_list("nelson"))), 100)
    result = analyse_history(x, setup)
    mr_rules = {f.rule for f in result.firings if f.chart == "moving-range"}
    assert mr_rules <= {"n1"}
    assert {f.rule for f in result.firings if f.chart == "individuals"} - {"n1"}
