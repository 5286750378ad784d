"""Run rules on charts with stepped limits judge z_i = (statistic − centre_i)/σ_i against 0, 1
and ±3 with the unchanged evaluators; with one subgroup size throughout they fire exactly where
the fixed-size path fires (an invariant: the standardisation is an increasing affine map), and
the live twin (`standard_point` + `stream.ChartRules`) agrees with the history."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.engine.attribute_charts import attribute_chart, given_attribute
from linewatch.engine.batch import analyse_history
from linewatch.engine.rulebook import RULES, resolve_rules
from linewatch.engine.rules import evaluate
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stepped import (
    StepLimits,
    SteppedSeries,
    evaluate_stepped,
    standard_point,
    standardise,
)
from linewatch.engine.stream import ChartLimitsState, ChartRules
from linewatch.engine.subgroups import subgroup_stats
from linewatch.engine.variable_limits import estimate_model, given_model, variable_charts

ALL = tuple(resolve_rules(list(RULES)))
BEYOND_ONLY = tuple(s for s in ALL if s.kind == "beyond")


@settings(max_examples=300, deadline=None)
@given(
    st.lists(st.integers(-10**6, 10**6), max_size=120),
    st.integers(-4, 4),
    st.booleans(),
)
def test_standardised_firings_equal_the_fixed_limit_firings_for_any_series(values, power, asym):
    # values on a grid of 1/64 that meets the zone edges and limits exactly, centre 0 and σ a
    # power of two: z = x/σ is exact, so any disagreement would be the method's (a value within
    # rounding error of an edge counts as on it in the stepped path)
    x = np.array(values, dtype=float) / 64.0
    sigma = 2.0**power
    steps = StepLimits(np.zeros(x.shape), np.full(x.shape, sigma), np.full(x.shape, 3 * sigma),
                       np.full(x.shape, -3 * sigma))
    z = standardise(x, steps)
    for spec in ALL:
        if asym:  # a dispersion chart: judged on its limits
            fixed = evaluate(spec, x, 0.0, sigma, 3 * sigma, -3 * sigma)
            stepped = evaluate(spec, z, 0.0, 1.0, 3.0, -3.0)
        else:
            fixed = evaluate(spec, x, 0.0, sigma)
            stepped = evaluate(spec, z, 0.0, 1.0)
        assert stepped.tolist() == fixed.tolist(), spec.id


def _fired(hist_firings, chart: str) -> set[tuple[str, int]]:
    return {(f.rule, f.index) for f in hist_firings if f.chart == chart}


def _stepped_fired(series: SteppedSeries, specs) -> set[tuple[str, int]]:
    fired = evaluate_stepped(series, specs)
    return {(rule, int(series.indices[i])) for rule, flags in fired.items()
            for i in np.flatnonzero(flags)}


@pytest.mark.parametrize("dispersion", ["range", "stdev"])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_constant_size_firings_equal_the_fixed_size_path_with_given_limits(dispersion, seed):
    rng = np.random.default_rng(seed)
    values = rng.normal(10.0, 1.0, 5 * 300) + np.repeat(rng.choice([0.0, 0.8, -1.2], 300), 5)
    values[500:520] *= 3.0  # a spell of wide spread for the dispersion chart
    setup = ChartSetup("x", 5, dispersion, ALL, center=10.0, sigma=1.0)
    hist = analyse_history(values, setup)
    stats = subgroup_stats(values, np.full(300, 5))
    loc, disp = variable_charts(stats, given_model(10.0, 1.0, dispersion))
    assert _stepped_fired(loc, ALL) == _fired(hist.firings, loc.chart)
    assert _stepped_fired(disp, BEYOND_ONLY) == _fired(hist.firings, disp.chart)
    assert _fired(hist.firings, loc.chart) and _fired(hist.firings, disp.chart)  # not vacuous


@pytest.mark.parametrize("seed", [4, 5])
def test_constant_size_firings_equal_the_fixed_size_path_with_phase_one_x_bar_r(seed):
    # with one size, the mean of R_i/d2(n) is R̄/d2(n): the same Phase I limits as the fixed path
    rng = np.random.default_rng(seed)
    values = rng.normal(0.0, 1.0, 4 * 200) + np.repeat(np.linspace(0, 1.5, 200), 4)
    hist = analyse_history(values, ChartSetup("x", 4, "range", ALL, baseline=50))
    stats = subgroup_stats(values, np.full(200, 4))
    loc, disp = variable_charts(stats, estimate_model(stats, "range", baseline=50))
    assert _stepped_fired(loc, ALL) == _fired(hist.firings, loc.chart)
    assert _stepped_fired(disp, BEYOND_ONLY) == _fired(hist.firings, disp.chart)


@settings(max_examples=150, deadline=None)
@given(
    st.lists(st.tuples(st.integers(1, 12), st.one_of(st.floats(-4, 4, allow_nan=False),
                                                      st.sampled_from([-3.0, -2.0, 1.0, 3.0]))),
             max_size=100),
)
def test_the_live_twin_gives_the_history_firings_on_stepped_limits(points):
    sizes = np.array([n for n, _ in points], dtype=np.int64)
    means = np.array([v for _, v in points], dtype=float) / np.sqrt(np.maximum(sizes, 1))
    model = given_model(0.0, 1.0, "stdev")
    series = SteppedSeries("xbar", means, sizes, np.arange(len(points)), np.arange(len(points)),
                           model.location_steps(sizes))
    expected = evaluate_stepped(series, ALL)
    live = ChartRules(ALL, ChartLimitsState(0.0, 1.0))
    for i, value in enumerate(means.tolist()):
        center, sigma, _, _ = series.limits.point(i)
        fired = set(live.push(standard_point(value, center, sigma)))
        assert fired == {rule for rule, flags in expected.items() if flags[i]}


def test_a_point_exactly_on_its_limit_is_not_beyond_it():
    # 230 of 400 against p̄ = 0.5 is 0.575 = 0.5 + 3·√(0.25/400) exactly; the float division
    # puts z a few units in the last place away from 3
    chart = attribute_chart("p", np.array([230, 170]), np.array([400, 400]),
                            given_attribute("p", 0.5))
    raw = (chart.values - chart.limits.center) / chart.limits.sigma
    assert raw[0] != 3.0
    assert chart.z().tolist() == [3.0, -3.0]
    assert not evaluate_stepped(chart, BEYOND_ONLY)["n1"].any()
    assert standard_point(float(chart.values[0]), 0.5, float(chart.limits.sigma[0])) == 3.0
