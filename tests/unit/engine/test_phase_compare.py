"""Two phases compared, held to scipy.stats (ttest_ind with equal_var=False, levene with
center='median', the F distribution) and to the definitions the verdict is written from."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from linewatch.engine.phase_compare import (
    brown_forsythe,
    compare,
    f_quantile,
    sd_ratio,
    sentence,
    welch,
)

SEEDS = range(6)


def _pair(seed: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    a = rng.normal(10.0, 0.05, 20 + 7 * seed)
    b = rng.normal(10.0 + 0.01 * seed, 0.03 + 0.01 * seed, 15 + 5 * seed)
    return a, b


@pytest.mark.parametrize("seed", SEEDS)
def test_welch_matches_scipy(seed: int) -> None:
    a, b = _pair(seed)
    got = welch(a, b)
    assert got is not None
    diff, (lo, hi), t, df, p = got
    ref = stats.ttest_ind(b, a, equal_var=False)  # scipy.stats, the reference
    assert t == pytest.approx(ref.statistic, rel=1e-10)
    assert p == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-14)
    ci = ref.confidence_interval(0.95)
    assert (lo, hi) == pytest.approx((ci.low, ci.high), rel=1e-9)
    assert diff == pytest.approx(b.mean() - a.mean())
    assert df == pytest.approx(ref.df, rel=1e-10)


@pytest.mark.parametrize("seed", SEEDS)
def test_brown_forsythe_matches_scipy_levene_median(seed: int) -> None:
    a, b = _pair(seed)
    ref = stats.levene(a, b, center="median")  # scipy.stats: Brown–Forsythe
    assert brown_forsythe(a, b) == pytest.approx(ref.pvalue, rel=1e-8, abs=1e-14)


@pytest.mark.parametrize(("d1", "d2", "p"), [(4, 9, 0.975), (19, 24, 0.025), (1, 30, 0.5),
                                             (60, 3, 0.9)])
def test_f_quantile_matches_scipy(d1: int, d2: int, p: float) -> None:
    assert f_quantile(d1, d2, p) == pytest.approx(stats.f.ppf(p, d1, d2), rel=1e-9)


@pytest.mark.parametrize("seed", SEEDS)
def test_sd_ratio_interval_from_the_f_distribution(seed: int) -> None:
    a, b = _pair(seed)
    got = sd_ratio(a, b)
    assert got is not None
    ratio, (lo, hi) = got
    r2 = np.var(b, ddof=1) / np.var(a, ddof=1)
    d1, d2 = b.size - 1, a.size - 1
    # the textbook interval for σ_b²/σ_a² (common practice), square-rooted; scipy's F quantiles
    assert ratio == pytest.approx(np.sqrt(r2))
    assert lo == pytest.approx(np.sqrt(r2 / stats.f.ppf(0.975, d1, d2)), rel=1e-9)
    assert hi == pytest.approx(np.sqrt(r2 / stats.f.ppf(0.025, d1, d2)), rel=1e-9)


def test_sd_ratio_interval_covers_the_true_ratio_about_95_percent() -> None:
    rng = np.random.default_rng(7)
    hits = 0
    trials = 2000
    for _ in range(trials):
        a, b = rng.normal(0, 1.0, 12), rng.normal(0, 1.5, 9)
        r = sd_ratio(a, b)
        assert r is not None
        hits += r[1][0] <= 1.5 <= r[1][1]
    assert 0.93 < hits / trials < 0.97  # binomial spread of 2000 trials: ± about 1%


def test_share_of_tolerance_and_sigma_units() -> None:
    a = np.array([10.0, 10.2, 9.8, 10.1, 9.9])
    b = a + 0.3
    c = compare(a, b, lsl=9.0, usl=11.0, sigma=0.15)
    assert c.difference == pytest.approx(0.3)
    assert c.share_of_tolerance == pytest.approx(0.3 / 2.0)
    assert c.in_sigma == pytest.approx(0.3 / 0.15)


def _shifted(shift: float, n: int, sd: float = 0.01, seed: int = 3) -> tuple[np.ndarray, ...]:
    rng = np.random.default_rng(seed)
    a = rng.normal(0.0, sd, n)
    return a, rng.normal(shift, sd, n)


def test_verdicts_separate_significance_from_size() -> None:
    # tolerance 1.0, threshold 10% = 0.1
    big = compare(*_shifted(0.2, 30), lsl=-0.5, usl=0.5)
    assert big.verdict == "different and matters"
    small = compare(*_shifted(0.02, 30), lsl=-0.5, usl=0.5)
    assert small.p_mean is not None and small.p_mean < 0.05
    assert small.verdict == "different but small"
    none = compare(*_shifted(0.0, 30), lsl=-0.5, usl=0.5)
    assert none.verdict == "no change that matters"
    wide = compare(*_shifted(0.05, 3, sd=0.2), lsl=-0.5, usl=0.5)
    assert wide.verdict == "unclear"
    assert "statistically different, but small" in sentence(small)
    assert "large enough to matter" in sentence(big)


def test_threshold_is_a_setting() -> None:
    a, b = _shifted(0.02, 30)
    assert compare(a, b, lsl=-0.5, usl=0.5, practical_share=0.01).verdict == \
        "different and matters"


def test_without_tolerance_only_significance_is_said() -> None:
    c = compare(*_shifted(0.2, 30), usl=0.5)
    assert c.verdict == "different"
    assert "no yardstick" in sentence(c)


def test_too_few_values_say_so() -> None:
    c = compare([1.0], [2.0, 3.0])
    assert c.verdict == "too few values"
    assert "too few values" in sentence(c)
