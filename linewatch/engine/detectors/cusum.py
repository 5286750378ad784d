"""The two-sided tabular CUSUM: C⁺_i = max(0, x_i − k + C⁺_{i−1}), C⁻ alike on −x_i.

Vectorised without a Python loop per point, by the exact identity of this recursion: with the
running sum S_i = S_{i−1} + y_i and its running minimum M_i = min(M_{i−1}, S_i),
C_i = S_i − M_i (starting from S_0 = 0, M_0 = −head start). numpy's cumulative sum adds left to
right and the running minimum is exact, so `scan` and `push` agree bitwise in any chunking. So
that S stays small (and C precise) however long a phase runs, both rebase at fixed positions of
the phase, every `BLOCK` points: S ← C, M ← 0 (the same C afterwards). The state carries S and
M of each side and the point count.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from linewatch.engine.rulebook import CusumSpec

BLOCK = 4096


@dataclass(slots=True)
class CusumState:
    """Where a CUSUM stands: points seen in the phase and each side's running sum and minimum
    (C = sum − minimum). JSON-ready through `to_json` / `from_json`."""

    count: int = 0
    sum_up: float = 0.0
    min_up: float = 0.0
    sum_down: float = 0.0
    min_down: float = 0.0

    @classmethod
    def fresh(cls, spec: CusumSpec) -> CusumState:
        """The state at the start of a phase: both sides at the head start."""
        start = 0.0 - spec.headstart  # (+0.0, not −0.0, without a head start)
        return cls(0, 0.0, start, 0.0, start)

    @property
    def upper(self) -> float:
        return self.sum_up - self.min_up

    @property
    def lower(self) -> float:
        return self.sum_down - self.min_down

    def to_json(self) -> dict[str, Any]:
        return {"count": self.count, "sum_up": self.sum_up, "min_up": self.min_up,
                "sum_down": self.sum_down, "min_down": self.min_down}

    @classmethod
    def from_json(cls, d: dict[str, Any]) -> CusumState:
        return cls(int(d["count"]), float(d["sum_up"]), float(d["min_up"]),
                   float(d["sum_down"]), float(d["min_down"]))


@dataclass(frozen=True, slots=True)
class CusumTrace:
    """The CUSUM of a chunk: C⁺ (`upper`) and C⁻ (`lower`) per point, in σ of the plotted
    statistic, and where each exceeded h (`up`, `down`)."""

    upper: np.ndarray
    lower: np.ndarray
    up: np.ndarray
    down: np.ndarray

    @property
    def fired(self) -> np.ndarray:
        both: np.ndarray = self.up | self.down
        return both


def _side(y: np.ndarray, s0: float, m0: float) -> tuple[np.ndarray, float, float]:
    """C of one side over `y` from running sum `s0` and minimum `m0`; with the final sum/min."""
    s = np.cumsum(np.concatenate(([s0], y)))[1:]
    m = np.minimum.accumulate(np.concatenate(([m0], s)))[1:]
    return s - m, float(s[-1]), float(m[-1])


def scan(spec: CusumSpec, x: np.ndarray, state: CusumState | None = None) -> tuple[CusumTrace,
                                                                                   CusumState]:
    """C⁺ and C⁻ over standardised points `x` continuing from `state` (a fresh phase when None)
    and the state after them; `state` itself is not changed."""
    st = CusumState.fresh(spec) if state is None else state
    x = np.asarray(x, dtype=float)
    n = x.shape[0]
    up_parts: list[np.ndarray] = []
    down_parts: list[np.ndarray] = []
    count, su, mu, sd, md = st.count, st.sum_up, st.min_up, st.sum_down, st.min_down
    y_up = x - spec.k
    y_down = -x - spec.k
    done = 0
    while done < n:  # one pass per block of BLOCK points, not per point
        stop = min(n, done + BLOCK - count % BLOCK)
        c_up, su, mu = _side(y_up[done:stop], su, mu)
        c_down, sd, md = _side(y_down[done:stop], sd, md)
        up_parts.append(c_up)
        down_parts.append(c_down)
        count += stop - done
        done = stop
        if count % BLOCK == 0:
            su, mu, sd, md = su - mu, 0.0, sd - md, 0.0
    upper = np.concatenate(up_parts) if up_parts else np.zeros(0)
    lower = np.concatenate(down_parts) if down_parts else np.zeros(0)
    return (CusumTrace(upper, lower, upper > spec.h, lower > spec.h),
            CusumState(count, su, mu, sd, md))


def _minimum(a: float, b: float) -> float:
    """min(a, b) as numpy's running minimum takes it: NaN if either is NaN (a point standardised
    by a vanishing σ), so both paths keep the same state."""
    if a != a or b != b:
        return math.nan
    return b if b < a else a


def push(spec: CusumSpec, x: float, state: CusumState) -> tuple[bool, bool]:
    """Take one standardised point into `state` (changed in place); whether C⁺ and C⁻ exceed h
    there. The latest statistics are `state.upper`, `state.lower`."""
    state.sum_up = state.sum_up + (x - spec.k)
    state.min_up = _minimum(state.min_up, state.sum_up)
    state.sum_down = state.sum_down + (-x - spec.k)
    state.min_down = _minimum(state.min_down, state.sum_down)
    state.count += 1
    up, down = state.upper > spec.h, state.lower > spec.h
    if state.count % BLOCK == 0:
        state.sum_up, state.min_up = state.upper, 0.0
        state.sum_down, state.min_down = state.lower, 0.0
    return up, down


def fired_rows(spec: CusumSpec, x: np.ndarray) -> np.ndarray:
    """Where the CUSUM fires (either side) in each row of `x` (independent runs from a fresh
    phase), stepping through the columns with all rows at once: the simulated run lengths'
    evaluator. Equal to `scan` row by row up to rounding (a test holds it to that)."""
    rows, width = x.shape
    up = np.full(rows, spec.headstart)
    down = np.full(rows, spec.headstart)
    out = np.zeros((rows, width), dtype=bool)
    for t in range(width):
        up = np.maximum(0.0, x[:, t] - spec.k + up)
        down = np.maximum(0.0, -x[:, t] - spec.k + down)
        out[:, t] = (up > spec.h) | (down > spec.h)
    return out
