"""Least squares on a setting, held to scipy.stats.linregress, numpy.polyfit, the NIST
Statistical Reference Dataset "Norris" (certified values), and to the interval formulas
written out plainly here."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from linewatch.engine.regression import fit, group_means

# NIST StRD, Linear Least Squares, "Norris" (lower difficulty): data and certified values as
# NIST publishes them (itl.nist.gov/div898/strd/lls/data/Norris.shtml)
NORRIS_X = [0.2, 337.4, 118.2, 884.6, 10.1, 226.5, 666.3, 996.3, 448.6, 777.0, 558.2, 0.4,
            0.6, 775.5, 666.9, 338.0, 447.5, 11.6, 556.0, 228.1, 995.8, 887.6, 120.2, 0.3,
            0.3, 556.8, 339.1, 887.2, 999.0, 779.0, 11.1, 118.3, 229.2, 669.1, 448.9, 0.5]
NORRIS_Y = [0.1, 338.8, 118.1, 888.0, 9.2, 228.1, 668.5, 998.5, 449.1, 778.9, 559.2, 0.3,
            0.1, 778.1, 668.8, 339.3, 448.9, 10.8, 557.7, 228.3, 998.0, 888.8, 119.6, 0.3,
            0.6, 557.6, 339.3, 888.0, 998.5, 778.9, 10.2, 117.6, 228.9, 668.4, 449.2, 0.2]


def test_norris_certified_values() -> None:
    f = fit(NORRIS_X, NORRIS_Y)
    assert f is not None
    assert f.intercept == pytest.approx(-0.262323073774029, rel=1e-10)
    assert f.slope == pytest.approx(1.00211681802045, rel=1e-12)
    assert f.std_errors[0] == pytest.approx(0.232818234301152, rel=1e-9)
    assert f.std_errors[1] == pytest.approx(0.429796848199937e-03, rel=1e-9)
    assert f.residual_sd == pytest.approx(0.884796396144373, rel=1e-10)
    assert f.r2 == pytest.approx(0.999993745883712, rel=1e-12)
    assert f.n == 36


def _data(seed: int, n: int = 40) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    x = rng.uniform(8.0, 14.0, n)
    y = 2.45 - 0.012 * x + 0.0015 * x * x + rng.normal(0, 0.004, n)
    return x, y


@pytest.mark.parametrize("seed", range(5))
def test_line_matches_linregress(seed: int) -> None:
    x, y = _data(seed)
    f = fit(x, y)
    ref = stats.linregress(x, y)
    assert f is not None
    assert f.slope == pytest.approx(ref.slope, rel=1e-10)
    assert f.intercept == pytest.approx(ref.intercept, rel=1e-10)
    assert f.r2 == pytest.approx(ref.rvalue ** 2, rel=1e-10)
    assert f.p_value == pytest.approx(ref.pvalue, rel=1e-7, abs=1e-15)
    assert f.std_errors[1] == pytest.approx(ref.stderr, rel=1e-9)
    assert f.std_errors[0] == pytest.approx(ref.intercept_stderr, rel=1e-9)
    t = stats.t.ppf(0.975, len(x) - 2)
    assert f.ci95[1] == pytest.approx((ref.slope - t * ref.stderr, ref.slope + t * ref.stderr))
    assert f.adj_r2 == pytest.approx(1 - (1 - ref.rvalue ** 2) * (len(x) - 1) / (len(x) - 2))


@pytest.mark.parametrize("seed", range(5))
def test_quadratic_matches_polyfit(seed: int) -> None:
    x, y = _data(seed)
    f = fit(x, y, degree=2)
    assert f is not None
    coef, cov = np.polyfit(x, y, 2, cov="unscaled")  # highest power first
    assert f.coefficients == pytest.approx(tuple(coef[::-1]), rel=1e-7)
    resid = y - np.polyval(coef, x)
    s2 = resid @ resid / (len(x) - 3)
    assert f.residual_sd == pytest.approx(math.sqrt(s2), rel=1e-9)
    assert f.std_errors == pytest.approx(tuple(np.sqrt(np.diag(cov) * s2)[::-1]), rel=1e-6)


def test_prediction_intervals_by_the_textbook_formula() -> None:
    x, y = _data(11, 25)
    f = fit(x, y)
    assert f is not None
    x0 = 12.3
    got = f.predict(x0)
    assert got is not None
    # written plainly: ŷ ± t(0.975, n−2)·s·√(1/n + (x0 − x̄)²/Sxx), and with 1 + ... inside
    n = len(x)
    b1, b0 = np.polyfit(x, y, 1)
    resid = y - (b0 + b1 * x)
    s = math.sqrt(resid @ resid / (n - 2))
    sxx = ((x - x.mean()) ** 2).sum()
    t = stats.t.ppf(0.975, n - 2)
    yhat = b0 + b1 * x0
    h = 1 / n + (x0 - x.mean()) ** 2 / sxx
    assert got.mean == pytest.approx(yhat, rel=1e-10)
    half = t * s * math.sqrt(h)
    assert got.mean_ci95 == pytest.approx((yhat - half, yhat + half))
    assert got.prediction95 == pytest.approx(
        (yhat - t * s * math.sqrt(1 + h), yhat + t * s * math.sqrt(1 + h)))
    _fitted, lo, hi = f.band(np.array([x0]))
    assert (lo[0], hi[0]) == pytest.approx(got.mean_ci95)


def test_fieller_interval_is_the_set_its_definition_names() -> None:
    x, y = _data(4, 30)
    f = fit(x, y)
    assert f is not None
    target = float(np.mean(y)) + 0.002
    inv = f.inverse(target)
    assert inv.setting is not None and inv.interval is not None
    assert f.intercept + f.slope * inv.setting == pytest.approx(target)
    # Fieller: the settings whose 95% confidence interval of the mean holds the target
    grid = np.linspace(0, 30, 300001)
    inside = []
    for g in grid[::100]:
        p = f.predict(float(g))
        assert p is not None
        inside.append(p.mean_ci95[0] <= target <= p.mean_ci95[1])
    inside_x = grid[::100][np.array(inside)]
    step = grid[100] - grid[0]
    assert inside_x.min() == pytest.approx(inv.interval[0], abs=step)
    assert inside_x.max() == pytest.approx(inv.interval[1], abs=step)


def test_no_setting_named_when_the_slope_is_not_significant() -> None:
    rng = np.random.default_rng(2)
    x = rng.uniform(0, 1, 15)
    y = rng.normal(0, 1, 15)
    f = fit(x, y)
    assert f is not None and f.p_value is not None and f.p_value > 0.05
    inv = f.inverse(0.5)
    assert inv.setting is None and inv.interval is None
    assert "no setting can be named" in inv.reason


def test_too_few_points_or_no_spread_give_no_fit() -> None:
    assert fit([1.0, 2.0], [3.0, 4.0]) is None
    assert fit([5.0, 5.0, 5.0, 5.0], [1.0, 2.0, 3.0, 4.0]) is None
    assert fit([1.0, 2.0, 3.0], [1.0, 2.0, 2.5], degree=2) is None


def test_group_means_average_value_and_setting_per_subgroup() -> None:
    v = np.array([1.0, 2.0, 3.0, 10.0, 20.0, 7.0])
    s = np.array([5.0, 7.0, np.nan, 1.0, 3.0, 9.0])
    g = np.array([0, 0, 0, 1, 1, -1])
    x, y = group_means(v, s, g)
    assert x.tolist() == [6.0, 2.0]
    assert y.tolist() == [1.5, 15.0]
