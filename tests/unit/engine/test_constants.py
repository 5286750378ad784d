"""Control-chart constants: regenerated from their definitions, compared with the printed table.

Part (a) recomputes d2, d3 and c4 independently of `constants.py` (Gauss–Legendre quadrature of the
range distribution of n standard normal values; c4 from scipy.special.gamma) and demands agreement
with the stored literals to 1e-9 relative. Part (b) derives every other factor from those by its
definition and holds both the code and the published table to it. Part (c) compares every factor
the code gives with the published table at its printed precision.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numpy.polynomial.legendre import leggauss
from scipy.special import gamma, ndtr

from linewatch.engine import constants as C

SIZES = range(C.MIN_N, C.MAX_N + 1)


def _nodes(a: float, b: float, k: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss–Legendre nodes and weights on [a, b]."""
    t, w = leggauss(k)
    return 0.5 * (b - a) * t + 0.5 * (b + a), 0.5 * (b - a) * w


def _range_moments() -> dict[int, tuple[float, float]]:
    """(d2, d3) for n = 2..25 straight from the definitions of the relative range W = R/σ.

    d2 = ∫ 1 − Φ(x)^n − (1 − Φ(x))^n dx
    P(W > w) = 1 − n ∫ φ(x) [Φ(x + w) − Φ(x)]^(n−1) dx
    E[W²] = ∫₀^∞ 2w P(W > w) dw,  d3 = √(E[W²] − d2²)
    Tails beyond |x| = 14 and w = 18 are below 1e-40 and are dropped.
    """
    x, wx = _nodes(-14.0, 14.0, 700)
    w, ww = _nodes(0.0, 18.0, 700)
    phi = np.exp(-0.5 * x * x) / math.sqrt(2.0 * math.pi)
    lower, upper = ndtr(x), ndtr(-x)  # Φ(x) and 1 − Φ(x), each without cancellation
    xs, ws = x[None, :], w[:, None]
    # Φ(x + w) − Φ(x), computed on the tail that keeps it accurate
    band = np.where(xs > 0, ndtr(-xs) - ndtr(-(xs + ws)), ndtr(xs + ws) - ndtr(xs))
    out: dict[int, tuple[float, float]] = {}
    for n in SIZES:
        d2 = float(np.sum(wx * (1.0 - lower**n - upper**n)))
        survival = 1.0 - n * np.sum(wx * phi * band ** (n - 1), axis=1)
        second = float(np.sum(ww * 2.0 * w * survival))
        out[n] = (d2, math.sqrt(second - d2 * d2))
    return out


@pytest.fixture(scope="module")
def range_moments() -> dict[int, tuple[float, float]]:
    return _range_moments()


@pytest.mark.parametrize("n", SIZES)
def test_d2_d3_match_their_definitions(n: int, range_moments: dict[int, tuple[float, float]]):
    d2, d3 = range_moments[n]
    assert C.d2(n) == pytest.approx(d2, rel=1e-9)
    assert C.d3(n) == pytest.approx(d3, rel=1e-9)


def test_closed_forms_for_small_subgroups():
    # Closed forms (common practice): for n = 2, W = |Z1 − Z2| = √2·|Z|, so E[W] = 2/√π and
    # E[W²] = 2; for n = 3, E[W] = 3/√π.
    assert C.d2(2) == pytest.approx(2.0 / math.sqrt(math.pi), rel=1e-12)
    assert C.d3(2) == pytest.approx(math.sqrt(2.0 - 4.0 / math.pi), rel=1e-12)
    assert C.d2(3) == pytest.approx(3.0 / math.sqrt(math.pi), rel=1e-12)


@pytest.mark.parametrize("n", SIZES)
def test_c4_matches_gamma_definition(n: int):
    # c4 = √(2/(n−1)) Γ(n/2)/Γ((n−1)/2), evaluated with scipy.special.gamma (not lgamma).
    expected = math.sqrt(2.0 / (n - 1)) * gamma(n / 2.0) / gamma((n - 1) / 2.0)
    assert C.c4(n) == pytest.approx(expected, rel=1e-9)


def test_sizes_outside_the_table_are_refused():
    for bad in (1, 26):
        with pytest.raises(ValueError, match="subgroup size"):
            C.d2(bad)
        with pytest.raises(ValueError, match="subgroup size"):
            C.c4(bad)


# Published table of factors for constructing variables control charts: Montgomery, Introduction
# to Statistical Quality Control, Appendix VI (the same figures appear in ASTM E2587).
# Quoted from memory, at the printed precision (4 decimals for c4, 3 for the rest).
# Columns: n, A2, A3, c4, B3, B4, B5, B6, d2, d3, D1, D2, D3, D4
TABLE = """
 2 1.880 2.659 0.7979 0     3.267 0     2.606 1.128 0.853 0     3.686 0     3.267
 3 1.023 1.954 0.8862 0     2.568 0     2.276 1.693 0.888 0     4.358 0     2.574
 4 0.729 1.628 0.9213 0     2.266 0     2.088 2.059 0.880 0     4.698 0     2.282
 5 0.577 1.427 0.9400 0     2.089 0     1.964 2.326 0.864 0     4.918 0     2.114
 6 0.483 1.287 0.9515 0.030 1.970 0.029 1.874 2.534 0.848 0     5.078 0     2.004
 7 0.419 1.182 0.9594 0.118 1.882 0.113 1.806 2.704 0.833 0.204 5.204 0.076 1.924
 8 0.373 1.099 0.9650 0.185 1.815 0.179 1.751 2.847 0.820 0.388 5.306 0.136 1.864
 9 0.337 1.032 0.9693 0.239 1.761 0.232 1.707 2.970 0.808 0.547 5.393 0.184 1.816
10 0.308 0.975 0.9727 0.284 1.716 0.276 1.669 3.078 0.797 0.687 5.469 0.223 1.777
11 0.285 0.927 0.9754 0.321 1.679 0.313 1.637 3.173 0.787 0.811 5.535 0.256 1.744
12 0.266 0.886 0.9776 0.354 1.646 0.346 1.610 3.258 0.778 0.922 5.594 0.283 1.717
13 0.249 0.850 0.9794 0.382 1.618 0.374 1.585 3.336 0.770 1.025 5.647 0.307 1.693
14 0.235 0.817 0.9810 0.406 1.594 0.399 1.563 3.407 0.763 1.118 5.696 0.328 1.672
15 0.223 0.789 0.9823 0.428 1.572 0.421 1.544 3.472 0.756 1.203 5.741 0.347 1.653
16 0.212 0.763 0.9835 0.448 1.552 0.440 1.526 3.532 0.750 1.282 5.782 0.363 1.637
17 0.203 0.739 0.9845 0.466 1.534 0.458 1.511 3.588 0.744 1.356 5.820 0.378 1.622
18 0.194 0.718 0.9854 0.482 1.518 0.475 1.496 3.640 0.739 1.424 5.856 0.391 1.608
19 0.187 0.698 0.9862 0.497 1.503 0.490 1.483 3.689 0.734 1.487 5.891 0.403 1.597
20 0.180 0.680 0.9869 0.510 1.490 0.504 1.470 3.735 0.729 1.549 5.921 0.415 1.585
21 0.173 0.663 0.9876 0.523 1.477 0.516 1.459 3.778 0.724 1.605 5.951 0.425 1.575
22 0.167 0.647 0.9882 0.534 1.466 0.528 1.448 3.819 0.720 1.659 5.979 0.434 1.566
23 0.162 0.633 0.9887 0.545 1.455 0.539 1.438 3.858 0.716 1.710 6.006 0.443 1.557
24 0.157 0.619 0.9892 0.555 1.445 0.549 1.429 3.895 0.712 1.759 6.031 0.451 1.548
25 0.153 0.606 0.9896 0.565 1.435 0.559 1.420 3.931 0.708 1.806 6.056 0.459 1.541
"""

FACTORS = {
    "A2": (C.a2, 3),
    "A3": (C.a3, 3),
    "c4": (C.c4, 4),
    "B3": (C.b3, 3),
    "B4": (C.b4, 3),
    "B5": (C.b5, 3),
    "B6": (C.b6, 3),
    "d2": (C.d2, 3),
    "d3": (C.d3, 3),
    "D1": (C.d1_lower, 3),
    "D2": (C.d2_upper, 3),
    "D3": (C.d3_lower, 3),
    "D4": (C.d4_upper, 3),
}


def _printed() -> list[tuple[int, str, float]]:
    rows = []
    for line in TABLE.strip().splitlines():
        n, *values = line.split()
        for name, value in zip(FACTORS, values, strict=True):
            rows.append((int(n), name, float(value)))
    return rows


def _printed_tolerance(name: str) -> float:
    """How far an exact factor may lie from its printed figure."""
    _, decimals = FACTORS[name]
    # ±1 in the last printed digit: printed values sometimes come from rounded inputs
    # (e.g. D4 for n = 3 is printed 2.574, exactly 2.5746).
    units = 1.0
    if name in ("D1", "D2"):
        # D1, D2 = d2 ∓ 3·d3 were printed from the 3-decimal d2 and d3 (e.g. n = 19: printed
        # 5.891 = 3.689 + 3·0.734, exactly 5.8894), so the rounding of the inputs can move them by
        # up to 0.5 + 3·0.5 units, plus 0.5 for their own rounding: allow 2.5 units.
        units = 2.5
    return units * 10.0**-decimals * (1.0 + 1e-9)


def _from_definitions(n: int, d2: float, d3: float) -> dict[str, float]:
    """Every factor of the table from its definition (Montgomery, Introduction to Statistical
    Quality Control, ch. 6; common practice), given d2 and d3 of the range distribution and c4
    from scipy.special.gamma: 3σ limits on the mean, the range and s."""
    c4 = math.sqrt(2.0 / (n - 1)) * gamma(n / 2.0) / gamma((n - 1) / 2.0)
    spread_s = 3.0 * math.sqrt(1.0 - c4 * c4)  # 3·SD(s)/σ
    return {
        "A2": 3.0 / (d2 * math.sqrt(n)),
        "A3": 3.0 / (c4 * math.sqrt(n)),
        "c4": c4,
        "B3": max(0.0, 1.0 - spread_s / c4),
        "B4": 1.0 + spread_s / c4,
        "B5": max(0.0, c4 - spread_s),
        "B6": c4 + spread_s,
        "d2": d2,
        "d3": d3,
        "D1": max(0.0, d2 - 3.0 * d3),
        "D2": d2 + 3.0 * d3,
        "D3": max(0.0, 1.0 - 3.0 * d3 / d2),
        "D4": 1.0 + 3.0 * d3 / d2,
    }


def test_the_code_charts_exactly_the_published_sizes():
    # The printed table runs n = 2..25; the code refuses sizes outside it (see above).
    assert sorted({n for n, _, _ in _printed()}) == list(SIZES)


@pytest.mark.parametrize("n", SIZES)
def test_every_factor_follows_its_definition(
    n: int, range_moments: dict[int, tuple[float, float]]
):
    # The code's derived factors against the definitions evaluated here from the quadrature
    # d2, d3 above, and the published table against the same definitions (a misquoted figure
    # fails here even if the code agreed with it).
    exact = _from_definitions(n, *range_moments[n])
    printed = {name: value for m, name, value in _printed() if m == n}
    for name, (function, _) in FACTORS.items():
        assert function(n) == pytest.approx(exact[name], rel=1e-9, abs=1e-12), (name, n)
        assert abs(exact[name] - printed[name]) <= _printed_tolerance(name), (name, n)


@pytest.mark.parametrize(("n", "name", "printed"), _printed())
def test_factor_matches_printed_table(n: int, name: str, printed: float):
    function, _ = FACTORS[name]
    got = function(n)
    assert abs(got - printed) <= _printed_tolerance(name), (name, n, got, printed)
