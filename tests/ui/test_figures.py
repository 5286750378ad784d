"""The close-up's trend and box-plot figures against general-purpose references (scipy, the
standard library) and definitions."""

from __future__ import annotations

import statistics

import numpy as np
import pytest
from scipy import stats

from linewatch.ui.figures import box_figures, project_to_spec, trend

# A fixed, noisy series (seeded numpy generator) for the reference comparisons.
SERIES = (np.arange(40) * 0.02 + np.random.default_rng(5).normal(0.0, 0.3, 40)).tolist()


def test_trend_agrees_with_scipy_linregress() -> None:
    # Reference: scipy.stats.linregress (slope, intercept, r, two-sided p of the slope).
    ref = stats.linregress(np.arange(len(SERIES)), SERIES)
    fit = trend(SERIES)
    assert fit is not None
    assert fit.slope == pytest.approx(ref.slope, rel=1e-12)
    assert fit.intercept == pytest.approx(ref.intercept, rel=1e-12)
    assert fit.r2 == pytest.approx(ref.rvalue**2, rel=1e-12)
    assert fit.p_value == pytest.approx(ref.pvalue, rel=1e-9)


def test_adjusted_r2_is_one_minus_the_ratio_of_mean_squares() -> None:
    # Definition (common practice): adj R² = 1 − (SSE/(n−2)) / (SST/(n−1)) for one predictor.
    y = np.asarray(SERIES)
    x = np.arange(y.size)
    slope, intercept = np.polyfit(x, y, 1)
    sse = float(((y - (intercept + slope * x)) ** 2).sum())
    sst = float(((y - y.mean()) ** 2).sum())
    fit = trend(SERIES)
    assert fit is not None
    assert fit.adj_r2 == pytest.approx(1 - (sse / (y.size - 2)) / (sst / (y.size - 1)), rel=1e-9)


def test_trend_needs_three_points_and_handles_a_flat_series() -> None:
    assert trend([1.0, 2.0]) is None
    flat = trend([5.0] * 10)
    assert flat is not None
    assert (flat.slope, flat.p_value) == (0.0, 1.0)


def test_projection_of_an_exact_line_to_the_limit_it_heads_for() -> None:
    # y = 10 + 0.5 x over x = 0..9: the newest fitted value is 14.5, so USL 20 is 11 points on.
    fit = trend([10 + 0.5 * x for x in range(10)])
    assert fit is not None and fit.p_value == 0.0
    proj = project_to_spec(fit, lsl=0.0, usl=20.0)
    assert proj is not None
    assert (proj.limit_name, proj.points) == ("USL", pytest.approx(11.0))
    falling = trend([10 - 0.5 * x for x in range(10)])
    assert falling is not None
    proj = project_to_spec(falling, lsl=0.0, usl=None)
    assert proj is not None
    assert (proj.limit_name, proj.points) == ("LSL", pytest.approx(11.0))
    assert project_to_spec(falling, lsl=None, usl=20.0) is None  # heading away from the USL


def test_no_projection_without_a_significant_slope() -> None:
    fit = trend([1.0, -1.0] * 10)
    assert fit is not None and fit.p_value > 0.05
    assert project_to_spec(fit, 0.0, 2.0) is None


def test_box_quartiles_agree_with_the_standard_library() -> None:
    # Reference: statistics.quantiles(method="inclusive") uses the same linear interpolation.
    q1, med, q3 = statistics.quantiles(SERIES, n=4, method="inclusive")
    fig = box_figures(SERIES)
    assert fig is not None
    assert (fig.q1, fig.median, fig.q3) == (pytest.approx(q1), pytest.approx(med),
                                            pytest.approx(q3))


def test_box_whiskers_stop_at_the_last_point_inside_one_and_a_half_iqr() -> None:
    # Tukey's fences at 1.5·IQR (common practice). Quartiles of 1..9 are 3 and 7, IQR 4, so the
    # fences are −3 and 13: 40 is outside, 9 is the last point inside.
    fig = box_figures([1, 2, 3, 4, 5, 6, 7, 8, 9, 40])
    assert fig is not None
    q1, _, q3 = statistics.quantiles([1, 2, 3, 4, 5, 6, 7, 8, 9, 40], n=4, method="inclusive")
    hi_fence = q3 + 1.5 * (q3 - q1)
    assert fig.outliers == [40.0]
    assert fig.high_whisker == 9.0 < hi_fence < 40.0
    assert fig.low_whisker == 1.0
