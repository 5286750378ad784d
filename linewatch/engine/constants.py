"""Control-chart constants for subgroup sizes 2..25, computed from their definitions.

d2(n) = E[R]/σ and d3(n) = SD[R]/σ for the range R of n independent standard normal values
(evaluated by numerical integration of the range distribution to double precision; the test suite
regenerates them), c4(n) = E[s]/σ from the gamma function. Every other factor (A2, A3, D3, D4, B3,
B4, ...) is derived here from these three, so there is one source for each number.
"""

from __future__ import annotations

from functools import cache
from math import exp, lgamma, sqrt

MIN_N = 2
MAX_N = 25

_D2: dict[int, float] = {
    2: 1.1283791670955128,
    3: 1.692568750643269,
    4: 2.058750746007928,
    5: 2.325928947281039,
    6: 2.5344127212229424,
    7: 2.7043567512138083,
    8: 2.847200612090554,
    9: 2.970026324418472,
    10: 3.0775054616703446,
    11: 3.1728727038159996,
    12: 3.2584552797438255,
    13: 3.3359803540982536,
    14: 3.406763108199952,
    15: 3.471826889882074,
    16: 3.5319827861095736,
    17: 3.587883961765381,
    18: 3.640063757937443,
    19: 3.688963023207648,
    20: 3.7349501195966397,
    21: 3.778335829842619,
    22: 3.8193846433628322,
    23: 3.858323423285005,
    24: 3.8953481484513546,
    25: 3.9306292195071104,
}

_D3: dict[int, float] = {
    2: 0.852502466427421,
    3: 0.8883680040452041,
    4: 0.8798082028249832,
    5: 0.8640819410995036,
    6: 0.848039686117495,
    7: 0.833205335622295,
    8: 0.8198314897919485,
    9: 0.8078342745533285,
    10: 0.7970506735194129,
    11: 0.7873146205503293,
    12: 0.7784783412033851,
    13: 0.7704162020637598,
    14: 0.7630230956247938,
    15: 0.7562114297279464,
    16: 0.7499080894099225,
    17: 0.7440517839607337,
    18: 0.7385908533781799,
    19: 0.733481495518871,
    20: 0.728686345707307,
    21: 0.7241733407175055,
    22: 0.7199148084342225,
    23: 0.7158867354918191,
    24: 0.712068175147944,
    25: 0.7084407658886676,
}


def _check(n: int) -> None:
    if not MIN_N <= n <= MAX_N:
        raise ValueError(f"subgroup size must be between {MIN_N} and {MAX_N}, got {n}")


def d2(n: int) -> float:
    """Mean of the relative range W = R/σ of n normal values."""
    _check(n)
    return _D2[n]


def d3(n: int) -> float:
    """Standard deviation of the relative range W = R/σ of n normal values."""
    _check(n)
    return _D3[n]


@cache
def c4(n: int) -> float:
    """E[s]/σ for a sample of n normal values: sqrt(2/(n-1)) Γ(n/2)/Γ((n-1)/2)."""
    _check(n)
    return sqrt(2.0 / (n - 1)) * exp(lgamma(n / 2.0) - lgamma((n - 1) / 2.0))


def a2(n: int) -> float:
    """X̄ chart factor on R̄: 3/(d2·√n)."""
    return 3.0 / (d2(n) * sqrt(n))


def a3(n: int) -> float:
    """X̄ chart factor on s̄: 3/(c4·√n)."""
    return 3.0 / (c4(n) * sqrt(n))


def d3_lower(n: int) -> float:
    """D3 = max(0, 1 − 3·d3/d2): R chart lower factor on R̄."""
    return max(0.0, 1.0 - 3.0 * d3(n) / d2(n))


def d4_upper(n: int) -> float:
    """D4 = 1 + 3·d3/d2: R chart upper factor on R̄."""
    return 1.0 + 3.0 * d3(n) / d2(n)


def d1_lower(n: int) -> float:
    """D1 = max(0, d2 − 3·d3): R chart lower factor on σ (standard given)."""
    return max(0.0, d2(n) - 3.0 * d3(n))


def d2_upper(n: int) -> float:
    """D2 = d2 + 3·d3: R chart upper factor on σ (standard given)."""
    return d2(n) + 3.0 * d3(n)


def b3(n: int) -> float:
    """B3 = max(0, 1 − 3·√(1−c4²)/c4): S chart lower factor on s̄."""
    c = c4(n)
    return max(0.0, 1.0 - 3.0 * sqrt(1.0 - c * c) / c)


def b4(n: int) -> float:
    """B4 = 1 + 3·√(1−c4²)/c4: S chart upper factor on s̄."""
    c = c4(n)
    return 1.0 + 3.0 * sqrt(1.0 - c * c) / c


def b5(n: int) -> float:
    """B5 = max(0, c4 − 3·√(1−c4²)): S chart lower factor on σ (standard given)."""
    c = c4(n)
    return max(0.0, c - 3.0 * sqrt(1.0 - c * c))


def b6(n: int) -> float:
    """B6 = c4 + 3·√(1−c4²): S chart upper factor on σ (standard given)."""
    c = c4(n)
    return c + 3.0 * sqrt(1.0 - c * c)
