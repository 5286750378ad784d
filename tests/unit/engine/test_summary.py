"""Summary figures against scipy, numpy, the statistics module and the textbook worked examples."""

from __future__ import annotations

import json
import math
import statistics
import subprocess
import sys
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats

from linewatch.engine.summary import capability, describe, summarize, trend

# Sample data for the comparisons: seeded normal draws (the reference libraries supply the answers).
RNG = np.random.default_rng(20240611)
SAMPLE = RNG.normal(10.0, 0.4, 57)


# --- description --------------------------------------------------------------------------------


def test_mean_sd_and_t_interval_match_scipy():
    d = describe(SAMPLE)
    assert d.points == SAMPLE.size
    assert d.mean == pytest.approx(statistics.fmean(SAMPLE), rel=1e-12)
    assert d.stdev == pytest.approx(statistics.stdev(SAMPLE), rel=1e-12)
    lo, hi = stats.t.interval(0.95, SAMPLE.size - 1, loc=SAMPLE.mean(), scale=stats.sem(SAMPLE))
    assert d.ci95 == pytest.approx((lo, hi), rel=1e-12)


@pytest.mark.parametrize("size", [2, 3, 4, 5, 10, 57])
def test_quartiles_match_statistics_inclusive_and_numpy_linear(size: int):
    x = SAMPLE[:size]
    d = describe(x)
    # statistics.quantiles(method="inclusive") and numpy's "linear" are both Hyndman–Fan type 7
    q1, q2, q3 = statistics.quantiles(x, n=4, method="inclusive")
    assert (d.q1, d.median, d.q3) == pytest.approx((q1, q2, q3), rel=1e-12)
    assert d.median == pytest.approx(statistics.median(x), rel=1e-12)
    np_q = np.percentile(x, [25, 50, 75], method="linear")
    assert (d.q1, d.median, d.q3) == pytest.approx(tuple(np_q), rel=1e-12)
    assert (d.minimum, d.maximum) == (x.min(), x.max())


def test_whiskers_and_outliers_follow_tukey_fences():
    # Tukey's box plot (common practice): fences at Q1 − 1.5·IQR and Q3 + 1.5·IQR; whiskers reach
    # the most extreme points inside; points outside are listed with their positions.
    x = [5.0, 7.0, 8.0, 8.0, 9.0, 9.0, 10.0, 11.0, 30.0, -6.0]
    q1, _, q3 = statistics.quantiles(x, n=4, method="inclusive")
    low, high = q1 - 1.5 * (q3 - q1), q3 + 1.5 * (q3 - q1)
    d = describe(x)
    inside = [v for v in x if low <= v <= high]
    assert d.whisker_low == min(inside)
    assert d.whisker_high == max(inside)
    expected = [(i, v) for i, v in enumerate(x) if v < low or v > high]
    assert list(d.outliers) == expected
    assert {i for i, _ in d.outliers} == {8, 9}


def test_point_on_a_fence_is_inside():
    # 1, 2, 3, 4, 5 has Q1 2, Q3 4, upper fence 7: a value of exactly 7 is inside
    d = describe([1.0, 2.0, 3.0, 4.0, 7.0])
    q1, _, q3 = statistics.quantiles([1.0, 2.0, 3.0, 4.0, 7.0], n=4, method="inclusive")
    assert q3 + 1.5 * (q3 - q1) == 7.0
    assert d.outliers == ()
    assert d.whisker_high == 7.0


@settings(max_examples=150, deadline=None)
@given(st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=1, max_size=60))
def test_box_plot_figures_partition_the_points(values: list[float]):
    # Invariants of Tukey's box plot (common practice): every point is either between the
    # whiskers or listed as an outlier, and the whiskers are data points inside the fences.
    d = describe(values)
    assert d.q1 is not None and d.q3 is not None
    low, high = d.q1 - 1.5 * (d.q3 - d.q1), d.q3 + 1.5 * (d.q3 - d.q1)
    listed = dict(d.outliers)
    for i, v in enumerate(values):
        if i in listed:
            assert listed[i] == v and (v < low or v > high)
        else:
            assert d.whisker_low <= v <= d.whisker_high
    assert d.whisker_low in values and d.whisker_high in values
    assert d.minimum <= d.q1 <= d.median <= d.q3 <= d.maximum


def test_degenerate_descriptions_return_none_not_errors():
    empty = describe([])
    assert empty.points == 0 and empty.mean is None and empty.outliers == ()
    one = describe([4.2])
    assert one.points == 1 and one.mean == 4.2 and one.stdev is None and one.ci95 is None
    flat = describe([3.0, 3.0, 3.0])
    assert flat.stdev == 0.0 and flat.ci95 == (3.0, 3.0) and flat.outliers == ()


def test_extreme_values_give_none_not_errors_or_warnings():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        record = summarize([1e308, -1e308, 1e308, 5.0], sigma_within=1.0, lsl=0.0, usl=1.0)
    out = record.to_dict()
    assert json.loads(json.dumps(out, allow_nan=False)) == out
    assert out["points"] == 4 and out["stdev"] is None  # the SD overflows: no figure


def test_non_finite_values_are_left_out_but_positions_kept():
    d = describe([1.0, float("nan"), 2.0, 3.0, 4.0, 100.0])
    assert d.points == 5
    assert d.mean == pytest.approx(statistics.fmean([1.0, 2.0, 3.0, 4.0, 100.0]))
    assert d.outliers == ((5, 100.0),)


# --- capability ---------------------------------------------------------------------------------


def test_cp_interval_worked_example():
    # Montgomery, Introduction to SQC, process capability chapter (printed figures quoted from
    # memory): USL 62, LSL 38, n 20, s 1.75 -> Cp 2.29, 95% CI 1.57 .. 3.01.
    x = 50.0 + 1.75 * _standardised(20)
    c = capability(x, sigma_within=1.75, lsl=38.0, usl=62.0)
    assert c.cp == pytest.approx(24.0 / (6 * 1.75), rel=1e-12)
    assert round(c.cp, 2) == 2.29
    assert c.cp_ci95 is not None
    # the book works from the rounded Ĉp 2.29; exactly (Ĉp 2.2857) the interval is 1.565 .. 3.006
    assert c.cp_ci95 == pytest.approx((1.57, 3.01), abs=0.01)  # ±1 in the last printed digit
    rounded = capability(x, sigma_within=24.0 / (6 * 2.29), lsl=38.0, usl=62.0)
    assert rounded.cp_ci95 is not None
    assert (round(rounded.cp_ci95[0], 2), round(rounded.cp_ci95[1], 2)) == (1.57, 3.01)
    # recomputed exactly from scipy's chi-square quantiles
    lo = c.cp * math.sqrt(stats.chi2.ppf(0.025, 19) / 19)
    hi = c.cp * math.sqrt(stats.chi2.ppf(0.975, 19) / 19)
    assert c.cp_ci95 == pytest.approx((lo, hi), rel=1e-10)
    # overall SD of these data is exactly 1.75, so Pp equals Cp here
    assert c.pp == pytest.approx(c.cp, rel=1e-12)


def test_cpk_interval_worked_example():
    # Same chapter (quoted from memory): Ĉpk 1.33 with n 20 gives a 95% interval 0.88 .. 1.78
    # (Bissell 1990). Build data whose Cpk is exactly 1.33: mean 50, σ 1, USL 53.99.
    x = 50.0 + _standardised(20)
    c = capability(x, sigma_within=1.0, usl=50.0 + 3 * 1.33)
    assert c.cpk == pytest.approx(1.33, rel=1e-12)
    assert c.cp is None and c.cp_ci95 is None  # one-sided spec: no Cp
    assert c.cpk_ci95 is not None
    assert (round(c.cpk_ci95[0], 2), round(c.cpk_ci95[1], 2)) == (0.88, 1.78)
    se = math.sqrt(1 / (9 * 20) + 1.33**2 / (2 * 19))
    z = stats.norm.ppf(0.975)
    assert c.cpk_ci95 == pytest.approx((1.33 - z * se, 1.33 + z * se), rel=1e-10)
    assert c.cpk_lower95 == pytest.approx(1.33 - stats.norm.ppf(0.95) * se, rel=1e-10)


def test_pp_ppk_and_ppm_use_the_overall_sd():
    x = SAMPLE
    mean, s = x.mean(), x.std(ddof=1)
    lsl, usl = 9.2, 11.5
    c = capability(x, sigma_within=0.3, lsl=lsl, usl=usl)
    assert c.cp == pytest.approx((usl - lsl) / (6 * 0.3))
    assert c.cpk == pytest.approx(min(usl - mean, mean - lsl) / (3 * 0.3))
    assert c.pp == pytest.approx((usl - lsl) / (6 * s))
    assert c.ppk == pytest.approx(min(usl - mean, mean - lsl) / (3 * s))
    expected_ppm = 1e6 * (stats.norm.cdf(lsl, mean, s) + stats.norm.sf(usl, mean, s))
    assert c.ppm_out == pytest.approx(expected_ppm, rel=1e-9)


@settings(max_examples=100, deadline=None)
@given(
    st.floats(-5, 5),
    st.floats(0.05, 3),
    st.floats(0.05, 3),
)
def test_cpk_is_cp_less_the_off_centre_penalty(shift: float, within: float, width: float):
    # Cpk = Cp − |mean − mid-spec|/(3σ) and Ppk likewise (common practice: Cpk = Cp(1 − k)).
    x = SAMPLE + shift
    lsl, usl = 10.0 - width, 10.0 + width
    c = capability(x, sigma_within=within, lsl=lsl, usl=usl)
    off = abs(x.mean() - 10.0)
    assert c.cp is not None and c.cpk is not None and c.pp is not None and c.ppk is not None
    assert c.cpk == pytest.approx(c.cp - off / (3 * within), rel=1e-9, abs=1e-9)
    assert c.ppk == pytest.approx(c.pp - off / (3 * x.std(ddof=1)), rel=1e-9, abs=1e-9)
    assert c.cp_ci95 is not None and c.cp_ci95[0] < c.cp < c.cp_ci95[1]
    assert c.ppm_out is not None and 0.0 <= c.ppm_out <= 1e6


def test_one_sided_lower_spec():
    x = SAMPLE
    mean, s = x.mean(), x.std(ddof=1)
    c = capability(x, sigma_within=0.5, lsl=9.0)
    assert c.cp is None and c.pp is None
    assert c.cpk == pytest.approx((mean - 9.0) / 1.5)
    assert c.ppk == pytest.approx((mean - 9.0) / (3 * s))
    assert c.ppm_out == pytest.approx(1e6 * stats.norm.cdf(9.0, mean, s), rel=1e-9)


def test_capability_degenerate_inputs():
    assert capability(SAMPLE, 0.4) == capability([], 0.4, lsl=1.0)  # no spec, no data: all None
    assert capability(SAMPLE, 0.4).cpk is None
    reversed_spec = capability(SAMPLE, 0.4, lsl=12.0, usl=8.0)
    assert reversed_spec.cp is None and reversed_spec.ppm_out is None
    flat = capability([5.0, 5.0, 5.0, 5.0], sigma_within=0.0, lsl=4.0, usl=6.0)
    assert flat.cp is None and flat.pp is None and flat.ppm_out is None
    single = capability([5.0], sigma_within=0.1, lsl=4.0, usl=6.0)
    assert single.cp == pytest.approx(2 / 0.6) and single.cp_ci95 is None and single.pp is None


# --- trend --------------------------------------------------------------------------------------


def test_trend_matches_linregress():
    y = SAMPLE + 0.01 * np.arange(SAMPLE.size)
    t = trend(y)
    ref = stats.linregress(np.arange(y.size), y)
    assert t.slope == pytest.approx(ref.slope, rel=1e-10)
    assert t.intercept == pytest.approx(ref.intercept, rel=1e-10)
    assert t.r2 == pytest.approx(ref.rvalue**2, rel=1e-10)
    assert t.p_value == pytest.approx(ref.pvalue, rel=1e-8)
    n = y.size
    assert t.adj_r2 == pytest.approx(1 - (1 - ref.rvalue**2) * (n - 1) / (n - 2), rel=1e-10)


def test_projection_to_the_spec_limit_ahead():
    # exact line 10 + 0.5·i for i = 0..9: last fitted value 14.5, USL 20 is 11 steps away
    y = 10.0 + 0.5 * np.arange(10)
    t = trend(y, lsl=0.0, usl=20.0)
    assert t.p_value == 0.0 and t.r2 == pytest.approx(1.0)
    assert t.points_to_spec == 11
    falling = trend(y[::-1], lsl=5.0, usl=20.0)  # from 14.5 down to 10.0: LSL 5 is 10 steps away
    assert falling.points_to_spec == 10
    assert trend(y, lsl=0.0).points_to_spec is None  # heading for no limit
    assert trend(y, usl=12.0).points_to_spec == 0  # already past it


def test_no_projection_without_a_significant_slope():
    t = trend(SAMPLE, lsl=0.0, usl=11.0)
    ref = stats.linregress(np.arange(SAMPLE.size), SAMPLE)
    assert ref.pvalue > 0.05  # the seeded sample has no trend
    assert t.points_to_spec is None


def test_trend_degenerate_inputs():
    assert trend([]).slope is None
    assert trend([1.0]).slope is None
    flat = trend([2.0, 2.0, 2.0])
    assert flat.slope == 0.0 and flat.r2 is None and flat.p_value is None
    two = trend([1.0, 3.0])
    assert two.slope == 2.0 and two.p_value is None


# --- record -------------------------------------------------------------------------------------


def test_summary_record_is_json_ready_with_the_agreed_keys():
    s = summarize(SAMPLE, sigma_within=0.4, lsl=9.0, usl=11.0)
    record = s.to_dict()
    assert list(record) == [
        "points", "mean", "stdev", "ci95", "min", "q1", "median", "q3", "max",
        "whisker_low", "whisker_high", "outliers", "cp", "cpk", "pp", "ppk", "cp_ci95",
        "cpk_ci95", "cpk_lower95", "ppm_out", "trend_slope", "trend_r2", "trend_adj_r2",
        "trend_p",
    ]  # fmt: skip
    assert json.loads(json.dumps(record, allow_nan=False)) == record
    assert record["ci95"] == list(s.description.ci95)
    assert record["cp"] == s.capability.cp and record["trend_p"] == s.trend.p_value
    empty = summarize([]).to_dict()
    assert json.loads(json.dumps(empty, allow_nan=False)) == empty


def _standardised(n: int) -> np.ndarray:
    """n seeded values rescaled to sample mean 0 and sample SD (n − 1) exactly 1."""
    z = np.random.default_rng(n).normal(size=n)
    return (z - z.mean()) / z.std(ddof=1)


def test_importing_the_module_leaves_scipy_unloaded():
    # scipy is imported inside the functions that need it, so `check` and `--help` start fast.
    code = (
        "import sys, linewatch.engine.summary as s\n"
        "s.describe([1.0])\n"
        "print(any(m.split('.')[0] == 'scipy' for m in sys.modules))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "False"
