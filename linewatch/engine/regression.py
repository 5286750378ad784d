"""A characteristic regressed on a process setting: least squares y = b0 + b1·x (+ b2·x²).

Figures: coefficients with their 95% intervals, R², adjusted R², residual SD, the p-value of
the highest term (the slope for a line), n; at a setting x0 the 95% confidence interval of the
mean and the 95% prediction interval of one new value; and for a line, the setting that puts
the mean on a target with its interval by Fieller's method — which has a finite interval only
when the slope differs from 0 at the 5% level, so otherwise no setting is named.

The fit is computed on x centred at its mean (better conditioned), then the coefficients are
turned back to the raw x. Pure numpy and the distributions module, no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from linewatch.engine.distributions import student_t_cdf, student_t_quantile

CONFIDENCE = 0.95


@dataclass(frozen=True, slots=True)
class Prediction:
    """The fitted mean at a setting, with its confidence and prediction intervals."""

    at: float
    mean: float
    mean_ci95: tuple[float, float]
    prediction95: tuple[float, float]


@dataclass(frozen=True, slots=True)
class Inverse:
    """The setting that puts the mean on `target`; `interval` by Fieller, None when the slope
    is not significant (then `setting` is None too and `reason` says why)."""

    target: float
    setting: float | None
    interval: tuple[float, float] | None
    reason: str = ""


@dataclass(frozen=True, slots=True)
class Fit:
    """A least-squares polynomial fit of y on x."""

    n: int
    degree: int
    coefficients: tuple[float, ...]  # b0, b1 (, b2) on the raw x
    std_errors: tuple[float, ...]
    ci95: tuple[tuple[float, float], ...]
    r2: float
    adj_r2: float | None
    residual_sd: float | None
    p_value: float | None  # of the highest term (the slope of a line)
    x_mean: float
    x_range: tuple[float, float]
    # on the centred x: coefficients and (XᵀX)⁻¹, for intervals at any setting
    _centred: np.ndarray = field(repr=False, compare=False, default_factory=lambda: np.zeros(0))
    _xtx_inv: np.ndarray = field(repr=False, compare=False, default_factory=lambda: np.zeros(0))
    _sxx: float = 0.0

    @property
    def slope(self) -> float:
        return self.coefficients[1]

    @property
    def intercept(self) -> float:
        return self.coefficients[0]

    def predict(self, x0: float, confidence: float = CONFIDENCE) -> Prediction | None:
        """ŷ(x0) ± t·s·√(x0ᵀ(XᵀX)⁻¹x0) (mean) and ± t·s·√(1 + x0ᵀ(XᵀX)⁻¹x0) (one new value);
        None without residual degrees of freedom."""
        if self.residual_sd is None:
            return None
        row = np.array([(x0 - self.x_mean) ** k for k in range(self.degree + 1)])
        mean = float(row @ self._centred)
        h = float(row @ self._xtx_inv @ row)
        t = student_t_quantile(self.n - self.degree - 1, 0.5 + confidence / 2.0)
        s = self.residual_sd
        m, p = t * s * math.sqrt(h), t * s * math.sqrt(1.0 + h)
        return Prediction(x0, mean, (mean - m, mean + m), (mean - p, mean + p))

    def band(self, xs: np.ndarray, confidence: float = CONFIDENCE) -> tuple[np.ndarray, ...]:
        """(fitted, lower, upper) of the mean's confidence band at each of `xs`."""
        d = np.asarray(xs, dtype=float) - self.x_mean
        rows = np.vstack([d ** k for k in range(self.degree + 1)]).T
        fitted = rows @ self._centred
        if self.residual_sd is None:
            return fitted, fitted, fitted
        h = np.einsum("ij,jk,ik->i", rows, self._xtx_inv, rows)
        t = student_t_quantile(self.n - self.degree - 1, 0.5 + confidence / 2.0)
        half = t * self.residual_sd * np.sqrt(h)
        return fitted, fitted - half, fitted + half

    def inverse(self, target: float, confidence: float = CONFIDENCE) -> Inverse:
        """The setting x with b0 + b1·x = target and Fieller's interval: every x where
        (target − ŷ(x))² ≤ t²·s²·(1/n + (x − x̄)²/Sxx). Lines only."""
        if self.degree != 1:
            return Inverse(target, None, None, "inverse prediction is given for a straight "
                           "line only (fit with degree 1)")
        if self.residual_sd is None or self.p_value is None:
            return Inverse(target, None, None, "too few points for an interval")
        b1, s, n = self._centred[1], self.residual_sd, self.n
        t = student_t_quantile(n - 2, 0.5 + confidence / 2.0)
        d = target - self._centred[0]  # target − ȳ (ŷ at x̄)
        a = b1 * b1 - t * t * s * s / self._sxx
        if not a > 0:
            return Inverse(target, None, None, "the slope is not significantly different from "
                           "0 at the 5% level, so no setting can be named for the target")
        c = d * d - t * t * s * s / n
        disc = b1 * b1 * d * d - a * c
        root = math.sqrt(max(disc, 0.0))
        lo, hi = sorted(((b1 * d - root) / a, (b1 * d + root) / a))
        return Inverse(target, self.x_mean + d / b1, (self.x_mean + lo, self.x_mean + hi))

    def equation(self, fmt: Any = None, x: str = "x", y: str = "y") -> str:
        """'y = b0 + b1·x (+ b2·x²)' with signs written out."""
        num = fmt or (lambda v: f"{v:.4g}")
        out = f"{y} = {num(self.coefficients[0])}"
        for k, b in enumerate(self.coefficients[1:], start=1):
            power = x if k == 1 else f"{x}²"
            out += f" {'−' if b < 0 else '+'} {num(abs(b))}·{power}"
        return out

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready figures."""
        names = ("intercept", "slope", "quadratic")
        out: dict[str, Any] = {"n": self.n, "degree": self.degree}
        for k, name in enumerate(names[: self.degree + 1]):
            out[name] = self.coefficients[k]
            out[f"{name}_se"] = self.std_errors[k]
            out[f"{name}_ci95"] = list(self.ci95[k])
        out.update({"r2": self.r2, "adj_r2": self.adj_r2, "residual_sd": self.residual_sd,
                    "p_value": self.p_value, "x_mean": self.x_mean,
                    "x_range": list(self.x_range)})
        return out


def fit(x: Any, y: Any, degree: int = 1, confidence: float = CONFIDENCE) -> Fit | None:
    """Least squares of y on x (pairs with a non-finite member are left out); None when there
    are not more points than coefficients or x does not vary enough for the degree."""
    xs = np.asarray(x, dtype=float).ravel()
    ys = np.asarray(y, dtype=float).ravel()
    keep = np.isfinite(xs) & np.isfinite(ys)
    xs, ys = xs[keep], ys[keep]
    n, k = int(xs.size), degree + 1
    if degree not in (1, 2) or n <= k or np.unique(xs).size < k:
        return None
    xm = float(np.mean(xs))
    d = xs - xm
    design = np.vstack([d ** j for j in range(k)]).T
    with np.errstate(all="ignore"):
        xtx_inv = np.linalg.inv(design.T @ design)
        beta = xtx_inv @ design.T @ ys
        resid = ys - design @ beta
        sse = float(resid @ resid)
        syy = float(((ys - ys.mean()) ** 2).sum())
    df = n - k
    r2 = 1.0 - sse / syy if syy > 0 else 1.0
    r2 = min(max(r2, 0.0), 1.0)
    adj = 1.0 - (1.0 - r2) * (n - 1) / df if df > 0 else None
    s = math.sqrt(sse / df) if df > 0 else None
    se_c = np.sqrt(np.diag(xtx_inv)) * (s or 0.0)
    # back to the raw x: y = Σ c_j (x − m)^j
    raw = np.zeros(k)
    transform = np.zeros((k, k))  # raw = transform @ centred
    for j in range(k):
        for i in range(j + 1):  # (x − m)^j = Σ_i C(j, i) x^i (−m)^(j − i)
            transform[i, j] = math.comb(j, i) * (-xm) ** (j - i)
    raw = transform @ beta
    cov_raw = transform @ (xtx_inv * (s or 0.0) ** 2) @ transform.T
    se_raw = np.sqrt(np.maximum(np.diag(cov_raw), 0.0))
    t = student_t_quantile(df, 0.5 + confidence / 2.0)
    ci = tuple((float(b - t * e), float(b + t * e)) for b, e in zip(raw, se_raw, strict=True))
    p = None
    if s is not None:
        top = float(se_c[-1])
        tt = float(beta[-1]) / top if top > 0 else math.inf
        p = 0.0 if not math.isfinite(tt) else min(2.0 * student_t_cdf(df, -abs(tt)), 1.0)
    return Fit(n, degree, tuple(float(v) for v in raw), tuple(float(v) for v in se_raw), ci,
               float(r2), adj, s, p, xm, (float(xs.min()), float(xs.max())), beta, xtx_inv,
               float(d @ d))


def group_means(values: np.ndarray, settings: np.ndarray, groups: np.ndarray
                ) -> tuple[np.ndarray, np.ndarray]:
    """Per group id (≥ 0; −1 is left out): the mean value and the mean setting of the group's
    rows whose setting is known — a subgroup mean regressed on the subgroup's mean setting."""
    keep = (groups >= 0) & np.isfinite(settings) & np.isfinite(values)
    g = groups[keep]
    if g.size == 0:
        return np.zeros(0), np.zeros(0)
    _ids, inverse = np.unique(g, return_inverse=True)
    counts = np.bincount(inverse)
    y = np.bincount(inverse, weights=values[keep]) / counts
    x = np.bincount(inverse, weights=settings[keep]) / counts
    return x, y
