"""The pure-Python distribution functions against scipy.special (the reference library), closed
forms of the t distribution with 1 and 2 degrees of freedom, and a 50-digit evaluation of the
incomplete gamma series where scipy itself loses digits."""

from __future__ import annotations

import math
from decimal import Decimal, localcontext

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import special

from linewatch.engine.distributions import (
    chi_square_cdf,
    chi_square_upper,
    chi_square_upper_quantile,
    normal_cdf,
    normal_quantile,
    student_t_cdf,
    student_t_quantile,
)

DFS = [1, 2, 3, 5, 10, 19, 30, 100, 1000, 10**5, 10**6]
CENTRAL = [1e-3, 0.01, 0.025, 0.05, 0.1, 0.25, 0.4, 0.6, 0.75, 0.9, 0.95, 0.975, 0.99, 0.999]
FAR = [1e-10, 1e-8, 1e-6, 1e-4, 1 - 1e-4, 1 - 1e-6, 1 - 1e-8, 1 - 1e-10]
GRID = [(p, 1e-10) for p in CENTRAL] + [(p, 1e-8) for p in FAR]  # (probability, rel. tolerance)


def close(value: float, reference: float, rel: float) -> bool:
    return math.isclose(value, reference, rel_tol=rel, abs_tol=0.0)


# --- normal: scipy.special.ndtr / ndtri ---------------------------------------------------------


@pytest.mark.parametrize("x", [-37.0, -20.0, -8.0, -3.0, -1.96, -0.5, 0.0, 0.3, 1.0, 2.5, 6.0])
def test_normal_cdf_matches_scipy(x: float):
    # rounding x/√2 alone costs about x²·1e-16 of relative precision far out in the tail
    assert close(normal_cdf(x), float(special.ndtr(x)), 1e-12)


@pytest.mark.parametrize("p", [1e-300, 1e-20, *FAR, *CENTRAL])
def test_normal_quantile_matches_scipy(p: float):
    assert close(normal_quantile(p), float(special.ndtri(p)), 1e-13)


# --- Student t: scipy.special.stdtrit / stdtr ---------------------------------------------------


@pytest.mark.parametrize("df", DFS)
def test_t_quantile_matches_scipy(df: int):
    for p, rel in GRID:
        assert close(student_t_quantile(df, p), float(special.stdtrit(df, p)), rel), p


@pytest.mark.parametrize("df", DFS)
def test_t_cdf_matches_scipy(df: int):
    for p, rel in GRID:
        t = float(special.stdtrit(df, p))  # the points where the CDF takes the grid's values
        assert close(student_t_cdf(df, t), float(special.stdtr(df, t)), rel), p


def test_t_quantile_of_one_df_is_the_cauchy_quantile():
    # t with 1 df is the Cauchy distribution: quantile tan(π(p − ½)) (common practice). Near the
    # centre this closed form is the reference: scipy's stdtrit loses digits there (2.7e-8 at
    # p = 0.499999999, measured here).
    def cauchy(p: float) -> float:
        if abs(p - 0.5) < 0.25:  # p − ½ is exact here
            return math.tan(math.pi * (p - 0.5))
        return -1.0 / math.tan(math.pi * p) if p < 0.5 else 1.0 / math.tan(math.pi * (1.0 - p))

    for p in [1e-300, 1e-10, 0.025, 0.3, 0.499999999, 0.5000001, 0.8, 1 - 1e-12]:
        exact = cauchy(p)
        assert close(student_t_quantile(1, p), exact, 1e-12), p
        assert close(student_t_cdf(1, exact), p, 1e-12), p


def test_t_quantile_of_two_df_has_the_closed_form():
    # t with 2 df: F(t) = ½ + t / (2√(2 + t²)), so t = (2p − 1)/√(2p(1 − p)) (from memory; it
    # gives 4.303 at p = 0.975, the printed table value)
    assert round(student_t_quantile(2, 0.975), 3) == 4.303
    for p in [1e-12, 0.01, 0.2, 0.49999, 0.5000001, 0.9, 1 - 1e-9]:
        exact = (2.0 * p - 1.0) / math.sqrt(2.0 * p * (1.0 - p))
        assert close(student_t_quantile(2, p), exact, 1e-12), p


def test_t_quantile_symmetry_and_centre():
    assert student_t_quantile(7, 0.5) == 0.0
    for df in (1, 3, 30, 10**6):
        for p in (2.0**-30, 2.0**-7, 0.3125):  # 1 − p is exact for these
            assert student_t_quantile(df, p) == -student_t_quantile(df, 1 - p)
            assert student_t_cdf(df, student_t_quantile(df, p)) == pytest.approx(p, rel=1e-12)


# --- chi-square: scipy.special.chdtri / chdtr / chdtrc ------------------------------------------


@pytest.mark.parametrize("df", DFS)
def test_chi_square_upper_quantile_matches_scipy(df: int):
    for q, rel in GRID:
        assert close(chi_square_upper_quantile(df, q), float(special.chdtri(df, q)), rel), q


@pytest.mark.parametrize("df", DFS)
def test_chi_square_tails_match_scipy(df: int):
    for q, rel in GRID:
        x = float(special.chdtri(df, q))
        assert close(chi_square_upper(df, x), float(special.chdtrc(df, x)), rel), q
        if df >= 10**6 and q > 0.999:
            continue  # scipy's lower tail is off here: see the 50-digit test below
        assert close(chi_square_cdf(df, x), float(special.chdtr(df, x)), rel), q


def _lower_gamma_50_digits(a: float, y: float) -> float:
    """P(a, y) by its power series e^(−y)·y^a·Σ yⁿ/Γ(a + n + 1) (Abramowitz & Stegun 6.5.29),
    summed with 50-digit decimals; ln Γ(a) by Stirling's series, five terms (a is large here)."""
    with localcontext() as ctx:
        ctx.prec = 50
        big_a, big_y = Decimal(a), Decimal(y)
        pi = Decimal("3.14159265358979323846264338327950288419716939937510")
        log_gamma = (big_a - Decimal("0.5")) * big_a.ln() - big_a + (2 * pi).ln() / 2
        for k, bernoulli in enumerate(["1/6", "-1/30", "1/42", "-1/30", "5/66"], start=1):
            num, den = (Decimal(s) for s in bernoulli.split("/"))
            log_gamma += num / den / (2 * k * (2 * k - 1) * big_a ** (2 * k - 1))
        term = total = 1 / big_a
        ap = big_a
        while term > total * Decimal("1e-40"):
            ap += 1
            term *= big_y / ap
            total += term
        return float((big_a * big_y.ln() - big_y - log_gamma).exp() * total)


def test_the_50_digit_series_agrees_with_scipy_where_scipy_holds():
    # the reference of the next test, checked against scipy at 10^5 degrees of freedom
    for q in (1 - 1e-6, 1 - 1e-10, 0.975):
        x = float(special.chdtri(10**5, q))
        assert close(_lower_gamma_50_digits(0.5 * 10**5, 0.5 * x), float(special.chdtr(10**5, x)),
                     1e-12)


@pytest.mark.parametrize("df", [10**6, 10**7])
def test_chi_square_far_lower_tail_at_large_df(df: int):
    # scipy 1.17's chdtr is off in the far lower tail at large df (1.7e-8 at 10^6, about 1% at
    # 10^7, measured here against this 50-digit sum); the sum is the reference.
    for q in (1 - 1e-6, 1 - 1e-10, 0.975):
        x = float(special.chdtri(df, q))
        assert close(chi_square_cdf(df, x), _lower_gamma_50_digits(0.5 * df, 0.5 * x), 1e-12)


# --- invalid input never raises -----------------------------------------------------------------


BAD = [0.0, -1.0, math.nan, -math.inf, "seven", None]


@pytest.mark.parametrize("bad", BAD)
def test_invalid_degrees_of_freedom_give_nan(bad):
    for f in (student_t_quantile, student_t_cdf, chi_square_upper_quantile, chi_square_cdf,
              chi_square_upper):
        assert math.isnan(f(bad, 0.3))


@pytest.mark.parametrize("bad", [0.0, 1.0, -0.2, 1.5, math.nan, math.inf, "half"])
def test_invalid_probabilities_give_nan(bad):
    assert math.isnan(normal_quantile(bad))
    assert math.isnan(student_t_quantile(5, bad))
    assert math.isnan(chi_square_upper_quantile(5, bad))


def test_limits_at_the_ends():
    assert student_t_cdf(3, -math.inf) == 0.0
    assert student_t_cdf(3, math.inf) == 1.0
    assert chi_square_cdf(4, -2.0) == 0.0
    assert chi_square_upper(4, math.inf) == 0.0
    assert math.isnan(normal_cdf(math.nan))
    # beyond the largest float: the t quantile of a tiny df is infinite, as the power tail says
    assert student_t_quantile(0.01, 1e-10) == -math.inf


finite_floats = st.floats(allow_nan=True, allow_infinity=True)


@settings(max_examples=200, deadline=None)
@given(finite_floats, finite_floats)
def test_any_float_gives_a_float(df: float, value: float):
    for f in (student_t_quantile, student_t_cdf, chi_square_upper_quantile, chi_square_cdf,
              chi_square_upper):
        assert isinstance(f(df, value), float)


# --- property: the quantiles invert the CDFs, and agree with scipy ------------------------------


def log_uniform(lo: float, hi: float) -> st.SearchStrategy[float]:
    return st.floats(math.log(lo), math.log(hi)).map(math.exp)


probabilities = st.floats(1e-12, 1 - 1e-12)


@settings(max_examples=150, deadline=None)
@given(log_uniform(0.05, 1e7), probabilities)
def test_t_quantile_inverts_the_cdf_and_matches_scipy(df: float, p: float):
    t = student_t_quantile(df, p)
    smaller = min(p, 1.0 - p)
    assert close(student_t_cdf(df, -abs(t)), smaller, 1e-10)
    # scipy's stdtrit loses digits near the centre (see the Cauchy test) and caps |t| near 1e153
    if abs(p - 0.5) > 1e-6 and df >= 0.5 and abs(t) < 1e100:
        assert close(t, float(special.stdtrit(df, p)), 1e-9)


@settings(max_examples=100, deadline=None)
@given(log_uniform(0.5, 1e7), probabilities)
def test_chi_square_quantile_inverts_the_tails_and_matches_scipy(df: float, q: float):
    x = chi_square_upper_quantile(df, q)
    if q <= 0.5:
        assert close(chi_square_upper(df, x), q, 1e-9)
    else:
        assert close(chi_square_cdf(df, x), 1.0 - q, 1e-9)
    if df <= 1e5:  # where scipy's chdtri is exact to double precision on the grids above
        assert close(x, float(special.chdtri(df, q)), 1e-9)
