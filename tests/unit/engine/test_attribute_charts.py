"""p, np, c and u charts against Montgomery's worked examples, Laney's p′ against the properties
Laney states, and the standardised rules against the charts' own limits.

Montgomery, Introduction to Statistical Quality Control, control charts for attributes (data and
printed figures quoted from memory; each data set's total matches the printed centre line):
- frozen orange juice cans, 30 samples of 50: p̄ = 0.2313, UCL 0.4102, LCL 0.0524, samples 15
  and 23 above the UCL;
- printed circuit boards, 26 samples of 100 boards: c̄ = 19.85, UCL 33.22, LCL 6.48, samples 6
  and 20 outside;
- personal computers, 20 samples of 5: ū = 1.93, UCL 3.79, LCL 0.07, no point outside.
Laney, Quality Engineering 14(4), 2002 (from memory): with σ_z = 1 the p′ chart is the p chart;
with equal subgroup sizes it is the individuals (XmR) chart of the proportions.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import ChartDataError, NotEnoughData
from linewatch.engine.attribute_charts import (
    AttributeModel,
    attribute_chart,
    estimate_attribute,
    given_attribute,
)
from linewatch.engine.limits import estimate_limits
from linewatch.engine.rulebook import RULES, resolve_rules
from linewatch.engine.stepped import evaluate_stepped

JUICE = [12, 15, 8, 10, 4, 7, 16, 9, 14, 10, 5, 6, 17, 12, 22, 8, 10, 5, 13, 11, 20, 18, 24, 15,
         9, 12, 7, 13, 9, 6]
BOARDS = [21, 24, 16, 12, 15, 5, 28, 20, 31, 25, 20, 24, 16, 19, 10, 17, 13, 22, 18, 39, 30, 24,
          16, 19, 17, 15]
COMPUTERS = [10, 12, 8, 14, 10, 16, 11, 7, 10, 15, 9, 5, 7, 11, 12, 6, 8, 10, 7, 5]
BEYOND = tuple(resolve_rules(["n1"]))


def _beyond(series) -> list[int]:
    return (np.flatnonzero(evaluate_stepped(series, BEYOND)["n1"]) + 1).tolist()


def test_p_chart_matches_the_orange_juice_example():
    counts, sizes = np.array(JUICE), np.full(30, 50)
    model, _ = estimate_attribute("p", counts, sizes)
    assert model.center == pytest.approx(0.2313, abs=5e-5)
    chart = attribute_chart("p", counts, sizes, model)
    assert chart.limits.ucl[0] == pytest.approx(0.4102, abs=5e-5)
    assert chart.limits.lcl[0] == pytest.approx(0.0524, abs=5e-5)
    assert _beyond(chart) == [15, 23]


def test_np_chart_follows_from_the_same_example():
    counts, sizes = np.array(JUICE), np.full(30, 50)
    model, _ = estimate_attribute("np", counts, sizes)
    chart = attribute_chart("np", counts, sizes, model)
    n_p = 50 * 0.231333
    assert chart.limits.center[0] == pytest.approx(n_p, abs=1e-3)
    assert chart.limits.ucl[0] == pytest.approx(n_p + 3 * math.sqrt(n_p * (1 - 0.231333)),
                                                abs=1e-3)  # 20.51
    assert chart.limits.ucl[0] == pytest.approx(20.51, abs=0.005)
    assert _beyond(chart) == [15, 23]


def test_an_np_chart_with_varying_sizes_is_refused_and_the_p_chart_suggested():
    with pytest.raises(ChartDataError, match="--chart p"):
        estimate_attribute("np", np.array([3, 4, 5]), np.array([50, 50, 48]))


def test_c_chart_matches_the_circuit_board_example():
    model, _ = estimate_attribute("c", np.array(BOARDS), np.ones(26))
    assert model.center == pytest.approx(19.85, abs=0.005)
    chart = attribute_chart("c", np.array(BOARDS), np.ones(26), model)
    assert chart.limits.ucl[0] == pytest.approx(33.22, abs=0.01)
    assert chart.limits.lcl[0] == pytest.approx(6.48, abs=0.01)
    assert _beyond(chart) == [6, 20]


def test_u_chart_matches_the_personal_computer_example():
    counts, sizes = np.array(COMPUTERS), np.full(20, 5)
    model, _ = estimate_attribute("u", counts, sizes)
    assert model.center == pytest.approx(1.93)
    chart = attribute_chart("u", counts, sizes, model)
    assert chart.limits.ucl[0] == pytest.approx(3.79, abs=0.005)
    assert chart.limits.lcl[0] == pytest.approx(0.07, abs=0.005)
    assert _beyond(chart) == []


def test_p_and_u_limits_step_with_the_subgroup_size():
    sizes = np.array([80, 100, 120, 100, 90])
    counts = np.array([8, 9, 14, 10, 7])
    p = estimate_attribute("p", counts, sizes)[0]
    assert p.center == pytest.approx(48 / 490)
    chart = attribute_chart("p", counts, sizes, p)
    spread = 3 * np.sqrt(p.center * (1 - p.center) / sizes)
    assert chart.limits.ucl == pytest.approx(p.center + spread)
    assert chart.limits.lcl == pytest.approx(np.maximum(0.0, p.center - spread))
    u = estimate_attribute("u", counts, sizes / 10)[0]  # 10 units to one inspection unit
    assert u.center == pytest.approx(48 / 49)
    u_chart = attribute_chart("u", counts, sizes / 10, u)
    assert u_chart.limits.ucl == pytest.approx(u.center + 3 * np.sqrt(u.center / (sizes / 10)))


def test_limits_are_clipped_to_what_a_proportion_or_count_can_be():
    chart = attribute_chart("p", np.array([1, 2]), np.array([2, 3]), given_attribute("p", 0.4))
    assert chart.limits.ucl.tolist() == [1.0, 1.0]
    assert chart.limits.lcl.tolist() == [0.0, 0.0]
    c = attribute_chart("c", np.array([0, 1]), np.ones(2), given_attribute("c", 2.0))
    assert c.limits.lcl.tolist() == [0.0, 0.0]


def test_standard_given_uses_the_known_centre_and_a_baseline_is_not_needed():
    model = given_attribute("p", 0.05)
    chart = attribute_chart("p", np.array([2, 12]), np.array([100, 100]), model)
    assert chart.limits.ucl[0] == pytest.approx(0.05 + 3 * math.sqrt(0.05 * 0.95 / 100))
    assert _beyond(chart) == [2]  # 0.12 above 0.1154
    laney, verdict = estimate_attribute("laney-p", np.array([2, 12, 5, 7]), np.full(4, 100),
                                        center=0.05)
    assert laney.center == 0.05 and laney.source == "given" and verdict.sigma_z == laney.sigma_z


def test_laney_p_prime_with_sigma_z_one_is_the_p_chart():
    sizes = np.array([500, 800, 650, 900])
    counts = np.array([40, 70, 50, 81])
    p = estimate_attribute("p", counts, sizes)[0]
    plain = attribute_chart("p", counts, sizes, p)
    prime = attribute_chart("laney-p", counts, sizes, AttributeModel("laney-p", p.center,
                                                                      "baseline", 1.0))
    assert prime.limits.ucl.tolist() == plain.limits.ucl.tolist()
    assert prime.limits.lcl.tolist() == plain.limits.lcl.tolist()


def test_laney_p_prime_with_equal_sizes_is_the_individuals_chart_of_the_proportions():
    rng = np.random.default_rng(5)
    counts = rng.binomial(2000, rng.normal(0.1, 0.01, 40).clip(0.01, 0.5))
    sizes = np.full(40, 2000)
    model, verdict = estimate_attribute("laney-p", counts, sizes)
    chart = attribute_chart("laney-p", counts, sizes, model)
    p = counts / 2000
    xmr = estimate_limits(p, np.abs(np.diff(p)), 1, "range").location
    assert chart.limits.ucl[0] == pytest.approx(xmr.ucl, rel=1e-12)
    assert chart.limits.lcl[0] == pytest.approx(xmr.lcl, rel=1e-12)
    assert verdict.kind == "over"  # σ of 0.01 between subgroups against √(0.09/2000) = 0.0067


def test_laney_sigma_z_widens_u_prime_limits():
    rng = np.random.default_rng(8)
    sizes = rng.uniform(50, 150, 60)
    counts = rng.poisson(sizes * rng.gamma(20.0, 0.1 / 20.0, 60))
    model, verdict = estimate_attribute("laney-u", counts, sizes)
    plain = estimate_attribute("u", counts, sizes)[0]
    prime = attribute_chart("laney-u", counts, sizes, model)
    expected = plain.center + 3 * np.sqrt(plain.center / sizes) * verdict.sigma_z
    assert prime.limits.ucl == pytest.approx(expected)
    assert verdict.sigma_z > 1.0


@pytest.mark.parametrize(
    ("chart", "counts", "sizes", "message"),
    [
        ("p", [3, 60], [50, 50], "subgroup 2: more nonconforming units than units inspected"),
        ("p", [3, -1], [50, 50], "subgroup 2: a count must be a whole number"),
        ("u", [3, 1.5], [5, 5], "subgroup 2: a count must be a whole number"),
        ("u", [3, 1], [5, 0], "subgroup 2: the size must be more than 0"),
        ("p", [3, 1], [50, 49.5], "whole number"),
    ],
)
def test_data_a_chart_cannot_take_names_the_subgroup(chart, counts, sizes, message):
    with pytest.raises(ChartDataError, match=message):
        estimate_attribute(chart, np.array(counts, dtype=float), np.array(sizes, dtype=float))


def test_a_baseline_without_events_is_refused_with_a_way_out():
    with pytest.raises(NotEnoughData, match="--center"):
        estimate_attribute("p", np.zeros(10), np.full(10, 50))
    with pytest.raises(NotEnoughData, match="more than 0"):
        estimate_attribute("c", np.zeros(10), np.ones(10))
    with pytest.raises(NotEnoughData, match="strictly between 0 and 1"):
        given_attribute("p", 1.2)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.integers(1, 400), st.floats(0, 1)), min_size=1, max_size=60),
       st.floats(0.001, 0.6))
def test_standardised_beyond_test_equals_each_points_own_limits(points, p_bar):
    sizes = np.array([n for n, _ in points], dtype=float)
    counts = np.floor(np.array([f for _, f in points]) * sizes)
    chart = attribute_chart("p", counts, sizes, given_attribute("p", p_bar))
    flags = evaluate_stepped(chart, tuple(resolve_rules(list(RULES))))
    direct = (chart.values > chart.limits.ucl) | (chart.values < chart.limits.lcl)
    assert flags["n1"].tolist() == direct.tolist()


def test_np_chart_with_a_known_proportion_is_clipped_only_at_its_n():
    # n·p ± 3√(n·p(1 − p)) = 10 ± 9 for n = 100, p = 0.1
    chart = attribute_chart("np", np.array([4, 20]), np.full(2, 100), given_attribute("np", 0.1))
    assert chart.limits.ucl.tolist() == pytest.approx([19.0, 19.0])
    assert chart.limits.lcl.tolist() == pytest.approx([1.0, 1.0])
    assert _beyond(chart) == [2]
    small = attribute_chart("np", np.array([1]), np.array([2]), given_attribute("np", 0.5))
    assert small.limits.ucl.tolist() == [2.0]  # 1 + 3·0.707 is more than the 2 units inspected
