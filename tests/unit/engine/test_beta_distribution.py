"""The pure-Python regularized incomplete beta function and its inverse against scipy.special
(the reference library). The inverse is held to scipy's CDF at the returned point: for very
unequal parameters scipy's own inverse (betaincinv) is the less precise of the two."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special

from linewatch.engine.distributions import beta_cdf, beta_quantile, beta_upper

SHAPES = [0.5, 1.0, 2.0, 5.0, 10.0, 37.0, 100.0, 1000.0, 1e5]
SECONDS = [0.5, 1.0, 3.0, 10.0, 50.0, 999.0, 1e4, 1e6]
POINTS = [1e-8, 1e-4, 0.01, 0.1, 0.3, 0.5, 0.7, 0.9, 0.999]


@pytest.mark.parametrize("a", SHAPES)
@pytest.mark.parametrize("b", SECONDS)
def test_both_tails_match_scipy(a: float, b: float):
    for x in [*POINTS, a / (a + b)]:
        lower, upper = float(special.betainc(a, b, x)), float(special.betaincc(a, b, x))
        if lower > 1e-300:
            assert math.isclose(beta_cdf(a, b, x), lower, rel_tol=1e-9)
        if upper > 1e-300:
            assert math.isclose(beta_upper(a, b, x), upper, rel_tol=1e-9)


@pytest.mark.parametrize("a", SHAPES)
@pytest.mark.parametrize("b", SECONDS)
def test_quantile_inverts_scipy_cdf(a: float, b: float):
    for p in [1e-10, 1e-3, 0.025, 0.5, 0.975, 0.999]:
        x = beta_quantile(a, b, p)
        if p <= 0.5:
            assert math.isclose(float(special.betainc(a, b, x)), p, rel_tol=1e-9)
        else:
            # near 1 a float x carries 1 − x to eps/(1 − x) only, and the tail goes as (1 − x)^b
            tol = 1e-9 + 2.3e-16 * max(b, 1.0) / (1.0 - x)
            assert math.isclose(float(special.betaincc(a, b, x)), 1 - p, rel_tol=tol)
        assert math.isclose(x, float(special.betaincinv(a, b, p)), rel_tol=1e-7)


@settings(max_examples=200, deadline=None)
@given(st.integers(0, 5000), st.integers(1, 5000), st.floats(1e-6, 1 - 1e-6))
def test_binomial_tail_is_the_incomplete_beta(k: int, extra: int, p: float):
    # P(X ≥ k) for X ~ Bin(n, p) equals I_p(k, n − k + 1) (scipy.special.bdtrc gives P(X > k))
    n = k + extra
    if k == 0:
        return
    reference = float(special.bdtrc(k - 1, n, p))
    if reference > 1e-280:
        assert math.isclose(beta_cdf(k, n - k + 1, p), reference, rel_tol=1e-8)


def test_invalid_input_gives_nan():
    assert math.isnan(beta_cdf(-1.0, 2.0, 0.5))
    assert math.isnan(beta_quantile(2.0, 2.0, 1.5))
    assert beta_cdf(2.0, 3.0, 0.0) == 0.0 and beta_cdf(2.0, 3.0, 1.0) == 1.0
