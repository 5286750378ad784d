"""Two phases of one characteristic compared: did the mean or the spread change, and is the
change large enough to matter?

- Means: Welch's difference (phase b − phase a) with its 95% interval on the Welch–Satterthwaite
  degrees of freedom and the two-sided p-value (the unequal-variance t-test).
- Spread: the ratio of SDs s_b / s_a with its 95% interval from the F distribution, and the
  Brown–Forsythe p-value (Levene's test on absolute deviations from each phase's median; with two
  phases its F statistic is the square of the pooled two-sample t of those deviations).
- Size: the difference as a share of the tolerance (USL − LSL) and in units of phase a's σ.
- The verdict separates "statistically different" (p below 5%) from "large enough to matter"
  (|difference| at least `practical` of the tolerance, 10% by default). That threshold is our
  convention, not a standard: it says how much of the tolerance a move may take before we call
  it practical, and a plant sets its own.

Pure Python and numpy (the distributions module), no I/O.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from linewatch.engine.distributions import beta_quantile, student_t_cdf, student_t_quantile

DEFAULT_PRACTICAL_SHARE = 0.10  # of the tolerance; our convention (see the module docstring)
ALPHA = 0.05

Verdict = Literal[
    "different and matters",  # p < α and |difference| ≥ threshold
    "different but small",  # p < α, |difference| below the threshold
    "unclear",  # p ≥ α, the interval reaches the threshold: more data could show a change
    "no change that matters",  # p ≥ α and the whole interval within ± threshold
    "different",  # p < α, no tolerance to judge the size by
    "no clear difference",  # p ≥ α, no tolerance
    "too few values",
]


@dataclass(frozen=True, slots=True)
class Comparison:
    """Phase b against phase a (b − a for the means, b / a for the SDs)."""

    a: str  # labels of the phases
    b: str
    n_a: int
    n_b: int
    mean_a: float | None = None
    mean_b: float | None = None
    difference: float | None = None
    difference_ci95: tuple[float, float] | None = None
    welch_t: float | None = None
    welch_df: float | None = None
    p_mean: float | None = None
    sd_a: float | None = None
    sd_b: float | None = None
    sd_ratio: float | None = None
    sd_ratio_ci95: tuple[float, float] | None = None
    p_spread: float | None = None  # Brown–Forsythe
    tolerance: float | None = None  # USL − LSL when both exist
    share_of_tolerance: float | None = None  # difference / tolerance (signed)
    sigma: float | None = None  # the σ the difference is expressed in (phase a's)
    in_sigma: float | None = None  # difference / sigma (signed)
    practical_share: float = DEFAULT_PRACTICAL_SHARE
    verdict: Verdict = "too few values"

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready figures (None where a figure does not exist)."""
        def pair(p: tuple[float, float] | None) -> list[float] | None:
            return None if p is None else [p[0], p[1]]

        return {
            "from": self.a, "to": self.b, "n_from": self.n_a, "n_to": self.n_b,
            "mean_from": self.mean_a, "mean_to": self.mean_b,
            "difference": self.difference, "difference_ci95": pair(self.difference_ci95),
            "welch_t": self.welch_t, "welch_df": self.welch_df, "p_mean": self.p_mean,
            "sd_from": self.sd_a, "sd_to": self.sd_b, "sd_ratio": self.sd_ratio,
            "sd_ratio_ci95": pair(self.sd_ratio_ci95), "p_spread": self.p_spread,
            "tolerance": self.tolerance, "share_of_tolerance": self.share_of_tolerance,
            "sigma": self.sigma, "in_sigma": self.in_sigma,
            "practical_share": self.practical_share, "verdict": self.verdict,
        }


def _finite(x: float) -> float | None:
    return float(x) if math.isfinite(x) else None


def f_quantile(d1: float, d2: float, p: float) -> float:
    """The p-quantile of the F(d1, d2) distribution, through the beta: if X ~ Beta(d1/2, d2/2)
    then d2·X / (d1·(1 − X)) ~ F(d1, d2)."""
    x = beta_quantile(d1 / 2.0, d2 / 2.0, p)
    return math.inf if x >= 1.0 else d2 * x / (d1 * (1.0 - x))


def welch(a: np.ndarray, b: np.ndarray, confidence: float = 0.95
          ) -> tuple[float, tuple[float, float], float, float, float] | None:
    """(b̄ − ā, its interval, t, Welch–Satterthwaite df, two-sided p); None below 2 values each
    or with no spread at all."""
    na, nb = a.size, b.size
    if na < 2 or nb < 2:
        return None
    va, vb = float(np.var(a, ddof=1)) / na, float(np.var(b, ddof=1)) / nb
    se2 = va + vb
    if not se2 > 0:
        return None
    diff = float(np.mean(b) - np.mean(a))
    se = math.sqrt(se2)
    df = se2 * se2 / (va * va / (na - 1) + vb * vb / (nb - 1))
    t = diff / se
    half = student_t_quantile(df, 0.5 + confidence / 2.0) * se
    p = 2.0 * student_t_cdf(df, -abs(t))
    return diff, (diff - half, diff + half), t, df, min(p, 1.0)


def brown_forsythe(a: np.ndarray, b: np.ndarray) -> float | None:
    """The Brown–Forsythe p-value of equal spread (Levene on |x − median|) for two groups."""
    za, zb = np.abs(a - np.median(a)), np.abs(b - np.median(b))
    na, nb = za.size, zb.size
    if na < 2 or nb < 2:
        return None
    pooled = ((na - 1) * float(np.var(za, ddof=1)) + (nb - 1) * float(np.var(zb, ddof=1))) / (
        na + nb - 2)
    if not pooled > 0:
        return None if float(np.mean(za)) == float(np.mean(zb)) else 0.0
    t = float(np.mean(zb) - np.mean(za)) / math.sqrt(pooled * (1.0 / na + 1.0 / nb))
    return min(2.0 * student_t_cdf(na + nb - 2, -abs(t)), 1.0)


def sd_ratio(a: np.ndarray, b: np.ndarray, confidence: float = 0.95
             ) -> tuple[float, tuple[float, float]] | None:
    """s_b / s_a and its interval: (s_b²/s_a²) / F(1 − α/2; n_b − 1, n_a − 1) … / F(α/2; ...),
    square-rooted."""
    if a.size < 2 or b.size < 2:
        return None
    sa, sb = float(np.std(a, ddof=1)), float(np.std(b, ddof=1))
    if not sa > 0:
        return None
    ratio2 = (sb / sa) ** 2
    d1, d2 = b.size - 1, a.size - 1
    alpha = 1.0 - confidence
    lo = ratio2 / f_quantile(d1, d2, 1.0 - alpha / 2.0)
    hi = ratio2 / f_quantile(d1, d2, alpha / 2.0)
    return sb / sa, (math.sqrt(lo), math.sqrt(hi))


def _verdict(p: float | None, ci: tuple[float, float] | None, tolerance: float | None,
             practical: float) -> Verdict:
    if p is None or ci is None:
        return "too few values"
    significant = p < ALPHA
    if tolerance is None:
        return "different" if significant else "no clear difference"
    threshold = practical * tolerance
    if significant:
        # the estimate decides "matters"; the interval is in the sentence
        return "different and matters" if abs(ci[0] + ci[1]) / 2 >= threshold \
            else "different but small"
    return "no change that matters" if max(abs(ci[0]), abs(ci[1])) < threshold else "unclear"


def compare(a_values: Any, b_values: Any, *, a: str = "a", b: str = "b",
            lsl: float | None = None, usl: float | None = None,
            sigma: float | None = None,
            practical_share: float = DEFAULT_PRACTICAL_SHARE) -> Comparison:
    """Phase b against phase a. `sigma` is the σ to express the difference in (phase a's σ
    within, the chart's); None takes phase a's overall SD. Non-finite values are left out."""
    x = np.asarray(a_values, dtype=float).ravel()
    y = np.asarray(b_values, dtype=float).ravel()
    x, y = x[np.isfinite(x)], y[np.isfinite(y)]
    tol = usl - lsl if lsl is not None and usl is not None and usl > lsl else None
    base = Comparison(a, b, int(x.size), int(y.size), tolerance=tol,
                      practical_share=practical_share)
    if x.size == 0 or y.size == 0:
        return base
    with np.errstate(all="ignore"):
        sd_a = float(np.std(x, ddof=1)) if x.size > 1 else None
        sd_b = float(np.std(y, ddof=1)) if y.size > 1 else None
        w = welch(x, y)
        r = sd_ratio(x, y)
        bf = brown_forsythe(x, y)
    diff = float(np.mean(y) - np.mean(x))
    scale = sigma if sigma is not None and sigma > 0 else (sd_a if sd_a and sd_a > 0 else None)
    return Comparison(
        a, b, int(x.size), int(y.size), float(np.mean(x)), float(np.mean(y)),
        _finite(diff), None if w is None else w[1], None if w is None else _finite(w[2]),
        None if w is None else _finite(w[3]), None if w is None else w[4],
        sd_a, sd_b, None if r is None else _finite(r[0]), None if r is None else r[1], bf,
        tol, None if tol is None else diff / tol, scale,
        None if scale is None else diff / scale, practical_share,
        _verdict(None if w is None else w[4], None if w is None else w[1], tol,
                 practical_share),
    )


def _p_text(p: float | None) -> str:
    if p is None:
        return "p not available"
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}"


def sentence(c: Comparison, fmt: Any = None, unit: str = "") -> str:
    """One plain sentence that separates "statistically different" from "large enough to
    matter". `fmt` formats a reading (default: 4 significant digits)."""
    num = fmt or (lambda v: f"{v:.4g}")
    u = f" {unit}" if unit else ""
    if c.verdict == "too few values" or c.difference is None or c.difference_ci95 is None:
        return (f"{c.b[:1].upper()}{c.b[1:]} against {c.a}: too few values to compare (at "
                "least 2 in each phase, with some spread).")
    lo, hi = c.difference_ci95
    way = "higher" if c.difference > 0 else "lower"
    moved = (f"{c.b[:1].upper()}{c.b[1:]} is {num(abs(c.difference))}{u} {way} than {c.a} "
             "(95% interval "
             f"{num(lo)} to {num(hi)}, {_p_text(c.p_mean)})")
    threshold = f"{100 * c.practical_share:.0f}%"
    share = "" if c.share_of_tolerance is None else f"{100 * abs(c.share_of_tolerance):.0f}%"
    if c.verdict == "different and matters":
        return (f"{moved}: statistically different, and large enough to matter — {share} of "
                f"the tolerance, at or above the {threshold} we count as practical.")
    if c.verdict == "different but small":
        return (f"{moved}: statistically different, but small — {share} of the tolerance, "
                f"below the {threshold} we count as practical.")
    if c.verdict == "unclear":
        return (f"{moved}: not statistically different, yet the interval reaches "
                f"{threshold} of the tolerance or more — more values are needed to rule out a "
                "change that matters.")
    if c.verdict == "no change that matters":
        return (f"{moved}: no change that matters — the whole interval lies within "
                f"{threshold} of the tolerance.")
    size = "" if c.in_sigma is None else f" ({abs(c.in_sigma):.2g} σ)"
    if c.verdict == "different":
        return (f"{moved}{size}: statistically different; with no tolerance (both spec "
                "limits) there is no yardstick for whether it matters.")
    return (f"{moved}{size}: no clear difference; with no tolerance (both spec limits) there "
            "is no yardstick for whether it would matter.")


def spread_sentence(c: Comparison) -> str:
    """The spread half: the SD ratio, its interval and the Brown–Forsythe p."""
    if c.sd_ratio is None or c.sd_ratio_ci95 is None:
        return "Spread: too few values to compare."
    lo, hi = c.sd_ratio_ci95
    changed = c.p_spread is not None and c.p_spread < ALPHA
    word = ("differs" if changed else "shows no clear difference")
    return (f"Spread {word}: SD ratio {c.sd_ratio:.3g} (95% interval {lo:.3g} to {hi:.3g}, "
            f"Brown–Forsythe {_p_text(c.p_spread)}).")
