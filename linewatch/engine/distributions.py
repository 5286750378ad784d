"""Normal, Student t and chi-square distribution functions in pure Python, to double precision.

The summary needs only a handful of CDF and quantile values; importing scipy for them would cost
more than charting a million rows. Methods: the normal CDF from math.erfc and its quantile from
statistics.NormalDist (Wichura's AS 241); the t CDF from the regularized incomplete beta function
by the continued fraction of DiDonato & Morris (modified Lentz); the chi-square CDF from the
regularized incomplete gamma function by power series or continued fraction. Both prefactors go
through Stirling's correction, so large degrees of freedom keep full precision. The quantiles use
safeguarded Newton iteration on the logarithm of the smaller tail, from a Cornish–Fisher or
Wilson–Hilferty start. Full double precision up to 10^9 degrees of freedom for chi-square (beyond,
Wilson–Hilferty) and any df for t (the normal beyond 10^20).

Every function takes plain floats, returns a float and never raises on data: invalid input
(df ≤ 0, a probability outside (0, 1), NaN) gives NaN.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from statistics import NormalDist

import numpy as np

_NAN = math.nan
_EPS = 2.220446049250313e-16
_TINY = 1e-300  # modified Lentz: stands in for a zero denominator
_LOG_SQRT_2PI = 0.5 * math.log(2.0 * math.pi)
_LOG_SQRT_PI = 0.5 * math.log(math.pi)  # lgamma(1/2)
_STANDARD = NormalDist()
# Stirling series coefficients of lgamma(z) − ((z − ½)·ln z − z + ½·ln 2π): B_2k / (2k(2k − 1)).
_STIRLING = (1 / 12, -1 / 360, 1 / 1260, -1 / 1680, 1 / 1188, -691 / 360360, 1 / 156)
_LOG_MAX = math.log(1.7976931348623157e308)  # ln of the largest float
_STIRLING_FROM = 10.0  # above this the series above is exact to double precision
_MAX_STEP = 4.0  # longest Newton step while the root is not yet bracketed (in ln x or asinh t)
_DF_FLOOR = 1e-300  # smaller df are taken as this (their half would underflow to 0)
_WILSON_HILFERTY_FROM = 1e9  # chi-square df from which the cube-root approximation is used
_NORMAL_FROM = 1e20  # Student t df from which t equals the normal to double precision
_VECTOR_SERIES_FROM = 1000.0  # shape parameter from which the gamma series is summed with numpy


def _real(value: object) -> float:
    """`value` as a float, NaN when it is not a number."""
    try:
        return float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        return _NAN


def _exp(w: float) -> float:
    """e^w, +inf instead of an OverflowError."""
    return math.exp(w) if w < _LOG_MAX else math.inf


def _invalid_probability(p: float) -> bool:
    return not 0.0 < p < 1.0  # also true for NaN


def _invalid_df(df: float) -> bool:
    return not df > 0.0  # also true for NaN


# --- normal -------------------------------------------------------------------------------------


def normal_cdf(x: float) -> float:
    """Standard normal CDF Φ(x) = ½·erfc(−x/√2); full relative precision in the lower tail."""
    x = _real(x)
    if math.isnan(x):
        return _NAN
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


def normal_quantile(p: float) -> float:
    """Standard normal quantile Φ⁻¹(p), by Wichura's AS 241 (statistics.NormalDist.inv_cdf)."""
    p = _real(p)
    if _invalid_probability(p):
        return _NAN
    return _STANDARD.inv_cdf(p)


# --- shared pieces ------------------------------------------------------------------------------


def _stirling_correction(z: float) -> float:
    """lgamma(z) − ((z − ½)·ln z − z + ½·ln 2π): the Stirling series for z ≥ 10, lgamma below."""
    if z >= _STIRLING_FROM:
        inv = 1.0 / z
        inv2 = inv * inv
        total = 0.0
        for coefficient in reversed(_STIRLING):
            total = total * inv2 + coefficient
        return total * inv
    return math.lgamma(z) - ((z - 0.5) * math.log(z) - z + _LOG_SQRT_2PI)


def _log1p_minus(u: float) -> float:
    """ln(1 + u) − u for |u| < 0.1 by its Taylor series, free of the cancellation."""
    # −u²/2 + u³/3 − u⁴/4 + ...
    term = -u * u
    total = 0.0
    k = 2
    while True:
        piece = term / k
        total += piece
        if abs(piece) <= _EPS * 1e-3 * abs(total):
            return total
        term *= -u
        k += 1


def _lgamma_ratio(a: float, b: float) -> float:
    """ln Γ(a + b) − ln Γ(a), without the cancellation of two large lgamma values."""
    if a < _STIRLING_FROM:
        return math.lgamma(a + b) - math.lgamma(a)
    # (a + b − ½)·ln(a + b) − (a − ½)·ln a − b, rearranged around ln(1 + b/a)
    s = a + b
    main = (a - 0.5) * math.log1p(b / a) + b * math.log(s) - b
    return main + _stirling_correction(s) - _stirling_correction(a)


def _solve(
    g: Callable[[float], tuple[float, float]],
    start: float,
    lo: float = -math.inf,
    hi: float = math.inf,
) -> tuple[float, float]:
    """Root of an increasing g by Newton steps from `start`, keeping the bracket [lo, hi] that the
    signs seen so far imply: a step that would leave it bisects it, and while one side is still
    open a step is at most `_MAX_STEP` long. `g` returns (value, derivative).

    Returns (x, dx): the last point and its final Newton correction, smaller than x's own rounding;
    callers apply dx after mapping x back to their variable, which keeps the digits a logarithmic
    variable would lose."""
    x = start
    open_step = 1.0
    for _ in range(300):
        value, slope = g(x)
        if value == 0.0:
            return x, 0.0
        if value < 0.0:
            lo = x
        else:
            hi = x
        step = value / slope if slope > 0.0 and math.isfinite(slope) else math.nan
        if abs(step) <= 2.0 * _EPS * max(1.0, abs(x)):  # below x's own rounding
            return x, -step
        candidate = x - step
        newton = lo < candidate < hi  # False also when the step is NaN
        if not newton:
            if math.isinf(lo) or math.isinf(hi):
                open_step *= 2.0
                candidate = x + open_step if value < 0.0 else x - open_step
            else:
                candidate = 0.5 * (lo + hi)
        elif abs(step) > _MAX_STEP and (math.isinf(lo) or math.isinf(hi)):
            candidate = x + math.copysign(_MAX_STEP, -step)
        if abs(candidate - x) <= 2.0 * _EPS * max(1.0, abs(candidate)):
            return (x, -step) if newton else (candidate, 0.0)
        x = candidate
    return x, 0.0


# --- Student t ----------------------------------------------------------------------------------


def _beta_fraction(a: float, b: float, x: float, y: float) -> float:
    """Denominator F of I_x(a, b) = x^a·y^b / (B(a, b)·F), y = 1 − x given exactly: the continued
    fraction of DiDonato & Morris (ACM TOMS 708) by modified Lentz. Its terms carry a·y − b·x + 1
    rather than a − (a + b)·x, so x close to 1 with a large (the t tails at large df) loses no
    digits; it converges fast when (a + b)·y ≥ b."""
    f = a * (a * y - b * x + 1.0) / (a + 1.0)
    f = f if f != 0.0 else _TINY
    c, d = f, 0.0
    limit = 1000 + int(40.0 * math.sqrt(max(a, b)))
    for m in range(1, limit):
        k = a + 2.0 * m - 1.0
        an = (a + m - 1.0) * (a + b + m - 1.0) * m * (b - m) * x * x / (k * k)
        bn = m + m * (b - m) * x / k + (a + m) * (a * y - b * x + 1.0 + m * (2.0 - x)) / (k + 2.0)
        d = bn + an * d
        d = 1.0 / (d if d != 0.0 else _TINY)
        c = bn + an / c
        c = c if c != 0.0 else _TINY
        delta = c * d
        f *= delta
        if abs(delta - 1.0) <= _EPS:
            break
    return f


def _log_beta_half(a: float) -> float:
    """ln B(a, ½) = ln Γ(½) − (ln Γ(a + ½) − ln Γ(a))."""
    return _LOG_SQRT_PI - _lgamma_ratio(a, 0.5)


def _t_beta_arguments(df: float, t: float) -> tuple[float, float, float]:
    """(y, x, ln x) with y = t²/(df + t²) and x = 1 − y = df/(df + t²), each formed without
    cancellation or overflow (t² overflows beyond about 1e154)."""
    if t < 1e150:
        t2 = t * t
        return t2 / (df + t2), df / (df + t2), -math.log1p(t2 / df)
    r = (df / t) / t
    return 1.0 / (1.0 + r), r / (1.0 + r), math.log(df) - 2.0 * math.log(t) - math.log1p(r)


def _t_halves(df: float, t: float) -> tuple[float, float]:
    """(P(T > t), P(0 < T < t)) for t ≥ 0, as ½·I_x(df/2, ½) and ½·I_y(½, df/2) with
    x = df/(df + t²), y = 1 − x. Whichever the fraction converges for is computed directly, the
    other as ½ minus it, so each keeps its relative precision where it is the small one."""
    if math.isinf(t):
        return 0.0, 0.5
    a, b = 0.5 * df, 0.5
    y, x, log_x = _t_beta_arguments(df, t)
    if y == 0.0:
        return 0.5, 0.0
    front = math.exp(a * log_x + b * math.log(y) - _log_beta_half(a))  # x^a·y^b / B(a, b)
    if (a + b) * y >= b:  # the fraction for I_x(a, b) converges fast here
        upper = 0.5 * front / _beta_fraction(a, b, x, y)
        return upper, 0.5 - upper
    middle = 0.5 * front / _beta_fraction(b, a, y, x)
    return 0.5 - middle, middle


def _log_t_density(df: float, t: float) -> float:
    """ln of the t density, (1 + t²/df)^(−(df + 1)/2) / (√df·B(df/2, ½))."""
    log_x = _t_beta_arguments(df, t)[2]  # ln x = −ln(1 + t²/df)
    return 0.5 * (df + 1.0) * log_x - 0.5 * math.log(df) - _log_beta_half(0.5 * df)


def student_t_cdf(df: float, t: float) -> float:
    """Student t CDF with `df` degrees of freedom, via the regularized incomplete beta function."""
    df, t = _real(df), _real(t)
    if _invalid_df(df) or math.isnan(t):
        return _NAN
    df = max(df, _DF_FLOOR)
    if df > _NORMAL_FROM:
        return normal_cdf(t)
    upper, middle = _t_halves(df, abs(t))
    return upper if t <= 0.0 else 0.5 + middle


def _log_t_tail_start(df: float, q: float) -> float:
    """ln t with P(T > t) ≈ q from the power tail P(T > t) ≈ df^(df/2 − 1)·t^(−df)/B(df/2, ½)."""
    return 0.5 * math.log(df) - (math.log(df) + _log_beta_half(0.5 * df) + math.log(q)) / df


def _t_start(df: float, q: float) -> float:
    """A starting t with upper tail q ≤ ½: Cornish–Fisher for larger df, the power tail for the
    far tail of small df."""
    z = -normal_quantile(q)
    if df >= 4.0:
        z2 = z * z
        g1 = (z2 + 1.0) * z / 4.0
        g2 = ((5.0 * z2 + 16.0) * z2 + 3.0) * z / 96.0
        g3 = (((3.0 * z2 + 19.0) * z2 + 17.0) * z2 - 15.0) * z / 384.0
        inv = 1.0 / df
        cf = z + inv * (g1 + inv * (g2 + inv * g3))
        if df >= 10.0 or z < 3.0:
            return cf
    return max(math.exp(min(_log_t_tail_start(df, q), 700.0)), z)


_CENTRAL = 0.25  # upper tails at least this large are solved through P(0 < T < t) instead


def student_t_quantile(df: float, p: float) -> float:
    """Student t quantile by safeguarded Newton, solving the smaller side and restoring the sign
    by symmetry: in the tails ln P(T > t) in v = asinh t (power tails become straight lines),
    in the middle ln P(0 < T < t) in ln t (straight near 0, where the tail form loses digits).
    ±inf when the quantile lies beyond the largest float (df far below 1)."""
    df, p = _real(df), _real(p)
    if _invalid_df(df) or _invalid_probability(p):
        return _NAN
    df = max(df, _DF_FLOOR)
    if df > _NORMAL_FROM:
        return normal_quantile(p)
    if p == 0.5:
        return 0.0
    q = p if p < 0.5 else 1.0 - p  # exact for p ≥ ½
    sign = -1.0 if p < 0.5 else 1.0
    if q < _CENTRAL:
        if _log_t_tail_start(df, q) > _LOG_MAX + 1.0:  # the power tail is exact out there
            return sign * math.inf
        log_q = math.log(q)

        def tail(v: float) -> tuple[float, float]:
            # increasing in v: ln q − ln P(T > sinh v)
            t = math.sinh(v) if v < _LOG_MAX else math.inf
            upper = _t_halves(df, t)[0]
            if upper <= 0.0:
                return math.inf, math.inf
            slope = math.exp(_log_t_density(df, t)) * math.cosh(v) / upper
            return log_q - math.log(upper), slope

        v, dv = _solve(tail, math.asinh(_t_start(df, q)), lo=0.0)
        return sign * (math.sinh(v) + math.cosh(v) * dv if v < _LOG_MAX else math.inf)
    log_d = math.log(0.5 - q)  # exact: q in [¼, ½)

    def middle(w: float) -> tuple[float, float]:
        # increasing in w: ln P(0 < T < e^w) − ln(½ − q)
        t = _exp(w)
        mid = _t_halves(df, t)[1]
        if mid <= 0.0:
            return -math.inf, math.inf
        return math.log(mid) - log_d, math.exp(_log_t_density(df, t) + w) / mid

    start = _t_start(df, q)
    w, dw = _solve(middle, math.log(start) if start > 0.0 else -1.0)
    return sign * _exp(w) * (1.0 + dw)


# --- chi-square ---------------------------------------------------------------------------------


def _gamma_front(a: float, y: float) -> float:
    """y^a e^(−y) / Γ(a); for large a as √(a/2π)·exp(a·(ln(1 + u) − u) − stirling(a)), u = y/a − 1,
    which keeps the exponent's cancellation exact."""
    if a < _STIRLING_FROM:
        return math.exp(a * math.log(y) - y - math.lgamma(a))
    u = (y - a) / a
    if abs(u) < 0.1:
        log1p_minus = _log1p_minus(u)
    else:  # ln(y/a) − u; y/a underflows only when y is subnormal
        ratio = y / a
        log1p_minus = (math.log(ratio) if ratio > 0.0 else math.log(y) - math.log(a)) - u
    exponent = a * log1p_minus - _stirling_correction(a)
    return math.sqrt(a / (2.0 * math.pi)) * math.exp(exponent)


def _gamma_series(a: float, y: float) -> float:
    """Σ y^n / (a(a+1)···(a+n)), n ≥ 0, for y < a + 1. For large a the terms fall off only after
    about 9·√a of them, so the products are formed with numpy's cumprod in one pass."""
    if a >= _VECTOR_SERIES_FROM:
        count = int(9.0 * math.sqrt(a)) + 64
        ratios = y / (a + np.arange(1.0, count + 1.0))
        return (1.0 + float(np.cumprod(ratios).sum())) / a
    term = total = 1.0 / a
    ap = a
    for _ in range(100_000):
        ap += 1.0
        term *= y / ap
        total += term
        if term < total * _EPS * 0.5:
            break
    return total


def _gamma_pq(a: float, y: float) -> tuple[float, float, float]:
    """Regularized incomplete gamma (P, Q) and the prefactor y^a e^(−y)/Γ(a): the power series
    for y < a + 1, the continued fraction (modified Lentz) above."""
    if y <= 0.0:
        return 0.0, 1.0, 0.0
    if math.isinf(y):
        return 1.0, 0.0, 0.0
    front = _gamma_front(a, y)
    limit = 1000 + int(40.0 * math.sqrt(a))
    if y < a + 1.0:
        p = front * _gamma_series(a, y)
        return p, 1.0 - p, front
    b = y + 1.0 - a
    c = 1.0 / _TINY
    d = 1.0 / b
    h = d
    for i in range(1, limit):
        an = -i * (i - a)
        b += 2.0
        d = an * d + b
        d = 1.0 / (d if abs(d) > _TINY else _TINY)
        c = b + an / c
        c = c if abs(c) > _TINY else _TINY
        delta = d * c
        h *= delta
        if abs(delta - 1.0) <= _EPS:
            break
    q = front * h
    return 1.0 - q, q, front


def _chi_square_tails(df: float, x: float) -> tuple[float, float]:
    """(P(X ≤ x), P(X > x)); by Wilson–Hilferty beyond `_WILSON_HILFERTY_FROM` degrees of freedom
    (there the tails keep about 1e-6 relative precision down to 1e-300, far more mid-range)."""
    if math.isinf(df):
        return 0.0, 1.0
    if df > _WILSON_HILFERTY_FROM:
        h = 2.0 / (9.0 * df)
        # z = (cube root of x/df − (1 − h)) / √h, with 1/√h = √4.5·√df (h underflows near 1e308)
        z = (math.cbrt(max(x, 0.0) / df) - (1.0 - h)) * math.sqrt(4.5) * math.sqrt(df)
        return normal_cdf(z), normal_cdf(-z)
    p, q, _ = _gamma_pq(0.5 * df, max(0.5 * x, 0.0))
    return p, q


def chi_square_cdf(df: float, x: float) -> float:
    """Chi-square CDF P(X ≤ x) = P(df/2, x/2), the regularized lower incomplete gamma function."""
    df, x = _real(df), _real(x)
    if _invalid_df(df) or math.isnan(x):
        return _NAN
    df = max(df, _DF_FLOOR)
    return _chi_square_tails(df, x)[0]


def chi_square_upper(df: float, x: float) -> float:
    """Chi-square upper tail P(X > x) = Q(df/2, x/2), full relative precision in the tail."""
    df, x = _real(df), _real(x)
    if _invalid_df(df) or math.isnan(x):
        return _NAN
    df = max(df, _DF_FLOOR)
    return _chi_square_tails(df, x)[1]


def _chi_square_start(df: float, lower: float, upper: float) -> float:
    """ln(x/2) of a starting x: Wilson–Hilferty, or the small-x power law
    P ≈ (x/2)^(df/2)/Γ(df/2 + 1) where Wilson–Hilferty breaks down."""
    z = normal_quantile(lower) if lower < 0.5 else -normal_quantile(upper)
    h = 2.0 / (9.0 * df)
    base = 1.0 - h + z * math.sqrt(h)
    if base > 0.3:
        return math.log(0.5 * df) + 3.0 * math.log(base)
    a = 0.5 * df
    return (math.log(lower) + math.lgamma(a + 1.0)) / a


def chi_square_upper_quantile(df: float, upper: float) -> float:
    """The chi-square value whose upper-tail probability is `upper`: safeguarded Newton on the
    logarithm of the smaller tail in ln x, from a Wilson–Hilferty start (Wilson–Hilferty alone
    beyond 10^9 degrees of freedom, where the exact sums grow slow)."""
    df, upper = _real(df), _real(upper)
    if _invalid_df(df) or _invalid_probability(upper):
        return _NAN
    df = max(df, _DF_FLOOR)
    if math.isinf(df):
        return math.inf
    if df > _WILSON_HILFERTY_FROM:  # relative error below 1e-12 out there, far less mid-range
        h = 2.0 / (9.0 * df)
        return df * (1.0 - h - normal_quantile(upper) * math.sqrt(h)) ** 3
    a = 0.5 * df
    lower = 1.0 - upper  # exact for upper ≥ ½; the tail solved below is the exact one
    use_lower = upper > 0.5
    log_target = math.log(lower if use_lower else upper)

    def g(w: float) -> tuple[float, float]:
        # increasing in w = ln(x/2): ln P − ln p, or ln q − ln Q
        y = _exp(w)
        p, q, front = _gamma_pq(a, y)
        tail = p if use_lower else q
        if tail <= 0.0:
            return (-math.inf if use_lower else math.inf), math.inf
        value = math.log(tail) - log_target
        return (value if use_lower else -value), front / tail

    w, dw = _solve(g, _chi_square_start(df, lower, upper))
    return 2.0 * _exp(w) * (1.0 + dw)


# --- beta (binomial tails, Clopper–Pearson) -----------------------------------------------------


def _log_beta_front(a: float, b: float, x: float, y: float) -> float:
    """ln(x^a·y^b / B(a, b)) with y = 1 − x given exactly. For a, b ≥ 10 through Stirling's
    correction around the mode x0 = a/(a + b): a·ln(x/x0) + b·ln(y/y0) is summed as
    a·(ln(1 + u) − u) + b·(ln(1 + v) − v) with u = x/x0 − 1, v = y/y0 − 1 (the linear parts
    cancel exactly), so large parameters keep full precision; one large parameter goes through
    `_lgamma_ratio`. The logarithm of the larger of x, y is taken as log1p of the other."""
    log_x = math.log(x) if x <= 0.5 else math.log1p(-y)
    log_y = math.log(y) if y <= 0.5 else math.log1p(-x)
    if min(a, b) >= _STIRLING_FROM:
        s = a + b

        def part(c: float, t: float, log_t: float) -> float:
            # c·(ln(1 + w) − w) with w = t·s/c − 1
            w = (t * s - c) / c
            if abs(w) < 0.1:
                return c * _log1p_minus(w)
            return c * (log_t + math.log(s / c)) - c * w

        corrections = _stirling_correction(s) - _stirling_correction(a) - _stirling_correction(b)
        return (part(a, x, log_x) + part(b, y, log_y)
                + 0.5 * math.log(a * b / (2.0 * math.pi * s)) + corrections)
    small, big = (a, b) if a <= b else (b, a)
    log_beta = math.lgamma(small) - _lgamma_ratio(big, small)  # ln Γ(small) + ln Γ(big) − ln Γ(s)
    return a * log_x + b * log_y - log_beta


def _beta_tails(a: float, b: float, x: float, y: float) -> tuple[float, float]:
    """(I_x(a, b), 1 − I_x(a, b)) for 0 < x < 1, y = 1 − x: the smaller-converging fraction is
    computed directly and the other tail as 1 minus it."""
    front = math.exp(_log_beta_front(a, b, x, y))
    if (a + b) * y >= b:  # the fraction for I_x(a, b) converges fast here
        lower = front / _beta_fraction(a, b, x, y)
        return lower, 1.0 - lower
    upper = front / _beta_fraction(b, a, y, x)
    return 1.0 - upper, upper


def beta_cdf(a: float, b: float, x: float) -> float:
    """Regularized incomplete beta function I_x(a, b), the Beta(a, b) CDF (a binomial tail:
    P(X ≥ k) for X ~ Bin(n, p) is I_p(k, n − k + 1))."""
    a, b, x = _real(a), _real(b), _real(x)
    if _invalid_df(a) or _invalid_df(b) or math.isnan(x):
        return _NAN
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    return _beta_tails(a, b, x, 1.0 - x)[0]


def beta_upper(a: float, b: float, x: float) -> float:
    """1 − I_x(a, b), full relative precision where it is small."""
    a, b, x = _real(a), _real(b), _real(x)
    if _invalid_df(a) or _invalid_df(b) or math.isnan(x):
        return _NAN
    if x <= 0.0:
        return 1.0
    if x >= 1.0:
        return 0.0
    return _beta_tails(a, b, x, 1.0 - x)[1]


def beta_quantile(a: float, b: float, p: float) -> float:
    """The x with I_x(a, b) = p, by bisection on w = logit x (x and 1 − x are each formed from w
    without cancellation, so both ends keep relative precision), solving the smaller tail."""
    a, b, p = _real(a), _real(b), _real(p)
    if _invalid_df(a) or _invalid_df(b) or _invalid_probability(p):
        return _NAN
    use_lower = p <= 0.5
    target = math.log(p if use_lower else 1.0 - p)

    def excess(w: float) -> float:
        # increasing in w
        x = 1.0 / (1.0 + math.exp(-w)) if w > -_LOG_MAX else 0.0
        y = 1.0 / (1.0 + math.exp(w)) if w < _LOG_MAX else 0.0
        if x == 0.0:
            return -math.inf
        if y == 0.0:
            return math.inf
        lower, upper = _beta_tails(a, b, x, y)
        if use_lower:
            return math.log(lower) - target if lower > 0.0 else -math.inf
        return target - math.log(upper) if upper > 0.0 else math.inf

    lo, hi = -745.0, 745.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if excess(mid) < 0.0:
            lo = mid
        else:
            hi = mid
        if hi - lo <= 4.0 * _EPS * max(1.0, abs(mid)):
            break
    w = 0.5 * (lo + hi)
    return 1.0 / (1.0 + math.exp(-w))
