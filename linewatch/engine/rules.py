"""Vectorised evaluation of run rules over a whole series (history, `check`).

Each function reads a `RuleSpec` from `rulebook.py` and returns one boolean per point: whether the
rule fires at that point. `stream.py` evaluates the same specs incrementally; a property test
proves that both agree on any series and any chunking.
"""

from __future__ import annotations

import numpy as np

from linewatch.engine.rulebook import (
    ALTERNATE,
    BEYOND,
    K_OF_M,
    MIXTURE,
    SIDE_RUN,
    TREND,
    WITHIN,
    RuleSpec,
)

# Zone levels of a point: 1 within 1σ (|z| <= 1), 2 in (1σ, 2σ], 3 in (2σ, 3σ], 4 beyond 3σ.
LEVEL_BEYOND = 4


def classify(
    x: np.ndarray,
    center: float,
    sigma: float,
    ucl: float | None = None,
    lcl: float | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Side (−1, 0 on the centre line, +1) and zone level (1..4) of every point.

    With `ucl`/`lcl` given (dispersion charts, whose limits are not symmetric), level 4 means
    above UCL or below LCL and every other point is level 1.
    """
    x = np.asarray(x, dtype=float)
    side = np.sign(x - center).astype(np.int8)
    if ucl is not None or lcl is not None:
        hi = np.inf if ucl is None else ucl
        lo = -np.inf if lcl is None else lcl
        level = np.where((x > hi) | (x < lo), LEVEL_BEYOND, 1).astype(np.int8)
        return side, level
    z = np.abs(x - center) / sigma
    level = (1 + (z > 1) + (z > 2) + (z > 3)).astype(np.int8)
    return side, level


def run_length(flags: np.ndarray) -> np.ndarray:
    """Length of the run of True values ending at each position (0 where False)."""
    n = flags.shape[0]
    idx = np.arange(n)
    last_false = np.where(flags, -1, idx)
    np.maximum.accumulate(last_false, out=last_false)
    return idx - last_false


def run_at_least(flags: np.ndarray, length: int) -> np.ndarray:
    """Whether the run of True values ending at each position is at least `length` long: the
    same as `run_length(flags) >= length`, in about log2(length) passes over booleans (each
    pass doubles the run it has checked) instead of integer arrays."""
    out = np.array(flags, dtype=bool)
    if length <= 0:
        out[:] = True
        return out
    have = 1  # out[i]: the `have` flags ending at i are all set
    while have < length:
        step = min(have, length - have)
        out[step:] &= out[:-step]
        out[:step] = False
        have += step
    return out


def window_count(flags: np.ndarray, m: int) -> np.ndarray:
    """How many of the last `m` points (fewer at the start) are flagged, at each position."""
    counts: np.ndarray = np.cumsum(flags, dtype=np.int64)
    if m > 0 and counts.shape[0] > m:
        counts[m:] -= counts[:-m].copy()
    elif m <= 0:
        counts[:] = 0
    return counts


def _trend(x: np.ndarray, length: int) -> np.ndarray:
    out = np.zeros(x.shape[0], dtype=bool)
    if x.shape[0] < 2:
        return out
    d = np.diff(x)
    out[1:] = run_at_least(d > 0, length - 1) | run_at_least(d < 0, length - 1)
    return out


def _alternate(x: np.ndarray, length: int) -> np.ndarray:
    out = np.zeros(x.shape[0], dtype=bool)
    if x.shape[0] < 3:
        return out
    d = np.sign(np.diff(x))
    # alt[j]: diffs j and j+1 are both non-zero and of opposite sign
    alt = (d[1:] != 0) & (d[:-1] != 0) & (d[1:] == -d[:-1])
    # the run of alternations ending at diff pair (i-2, i-1) covers that many + 2 points
    out[2:] = run_at_least(alt, length - 2)
    return out


def evaluate_classified(
    spec: RuleSpec, x: np.ndarray, side: np.ndarray, level: np.ndarray
) -> np.ndarray:
    """Where `spec` fires, given the points and their classification."""
    match spec.kind:
        case "beyond":
            return level >= LEVEL_BEYOND
        case "side-run":
            fired: np.ndarray = run_at_least(side > 0, spec.length)
            fired |= run_at_least(side < 0, spec.length)
            return fired
        case "trend":
            return _trend(np.asarray(x, dtype=float), spec.length)
        case "alternate":
            return _alternate(np.asarray(x, dtype=float), spec.length)
        case "k-of-m":
            beyond = level > spec.zone
            up = beyond & (side > 0)
            down = beyond & (side < 0)
            return (up & (window_count(up, spec.length) >= spec.k)) | (
                down & (window_count(down, spec.length) >= spec.k)
            )
        case "within":
            return run_at_least(level == 1, spec.length)
        case "mixture":
            beyond = level >= 2
            both = (window_count(beyond & (side > 0), spec.length) > 0) & (
                window_count(beyond & (side < 0), spec.length) > 0
            )
            return run_at_least(beyond, spec.length) & both
    raise ValueError(f"unknown rule kind {spec.kind!r}")


def evaluate(
    spec: RuleSpec,
    x: np.ndarray,
    center: float,
    sigma: float,
    ucl: float | None = None,
    lcl: float | None = None,
) -> np.ndarray:
    """Where `spec` fires on series `x` with the given limits (one bool per point)."""
    x = np.asarray(x, dtype=float)
    side, level = classify(x, center, sigma, ucl, lcl)
    return evaluate_classified(spec, x, side, level)


__all__ = [
    "ALTERNATE",
    "BEYOND",
    "K_OF_M",
    "MIXTURE",
    "SIDE_RUN",
    "TREND",
    "WITHIN",
    "classify",
    "evaluate",
    "evaluate_classified",
    "run_at_least",
    "run_length",
    "window_count",
]
