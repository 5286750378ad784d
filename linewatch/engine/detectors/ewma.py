"""The EWMA detector: z_i = λ·x_i + (1 − λ)·z_{i−1} from z_0 = 0, with exact limits.

Vectorised without a Python loop per point: points are grouped in blocks of `block` points at
fixed positions of the phase (multiples of `block` from its first point). Inside a block that
starts after z_b,
    z_{b+p} = a^{p+1}·z_b + λ·a^p·W_p,   W_p = Σ_{t ≤ p} a^{−t}·x_{b+t},   a = 1 − λ,
where W is a running sum (numpy's cumulative sum adds left to right, like `push`). The block is
short enough that a^{−p} stays far from overflow. `scan` and `push` use the same power tables
and the same operations in the same order, so they agree bitwise whatever the chunking; the
state carries z_b, the running W and the point count.

The limit at the i-th point is L·√(λ/(2 − λ)·(1 − a^{2i})); from the point where a^{2i} no
longer changes 1 − a^{2i} in double precision the limit is the asymptotic one, so a table up to
there serves every point.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from linewatch.engine.rulebook import EwmaSpec

_MAX_BLOCK = 1024
_MAX_INVERSE_POWER = 1e200  # a^{−p} within a block stays below this


@dataclass(frozen=True, slots=True)
class _Tables:
    block: int
    pow_next: np.ndarray  # a^{p+1}, p = 0..block−1
    weight: np.ndarray  # λ·a^p
    inverse: np.ndarray  # a^{−p}
    half_width: np.ndarray  # limit at the i-th point, i = 1..len (later points: the last)
    pow_next_list: list[float]
    weight_list: list[float]
    inverse_list: list[float]
    half_width_list: list[float]


@lru_cache(maxsize=32)
def _tables(lam: float, width: float) -> _Tables:
    a = 1.0 - lam
    if a <= 0.0:
        block = 1
    else:
        block = int(min(_MAX_BLOCK, 1 + math.log10(_MAX_INVERSE_POWER) / -math.log10(a)))
    p = np.arange(block, dtype=float)
    pow_next = np.power(a, p + 1.0)
    weight = lam * np.power(a, p)
    inverse = np.ones(block) if a <= 0.0 else np.power(a, -p)
    # from a^{2i} below 2^−54 on, 1 − a^{2i} == 1
    settled = 1 if a <= 0.0 else math.ceil(27.0 * math.log(2.0) / -math.log(a)) + 2
    i = np.arange(1, settled + 1, dtype=float)
    half = width * np.sqrt(lam / (2.0 - lam) * (1.0 - np.power(a, 2.0 * i)))
    return _Tables(block, pow_next, weight, inverse, half, pow_next.tolist(), weight.tolist(),
                   inverse.tolist(), half.tolist())


@dataclass(slots=True)
class EwmaState:
    """Where an EWMA stands: points seen in the phase, z before the current block, running W,
    and the latest z (0 before the first point). JSON-ready through `to_json` / `from_json`."""

    count: int = 0
    z_block: float = 0.0
    running: float = 0.0
    z: float = 0.0

    def to_json(self) -> dict[str, Any]:
        return {"count": self.count, "z_block": self.z_block, "running": self.running,
                "z": self.z}

    @classmethod
    def from_json(cls, d: dict[str, Any]) -> EwmaState:
        return cls(int(d["count"]), float(d["z_block"]), float(d["running"]), float(d["z"]))


@dataclass(frozen=True, slots=True)
class EwmaTrace:
    """The EWMA of a chunk: statistic and limit half-width per point (σ units of the plotted
    statistic, centre 0) and where it fired above (`up`) and below (`down`)."""

    statistic: np.ndarray
    half_width: np.ndarray
    up: np.ndarray
    down: np.ndarray

    @property
    def fired(self) -> np.ndarray:
        both: np.ndarray = self.up | self.down
        return both


def half_widths(spec: EwmaSpec, first: int, count: int) -> np.ndarray:
    """Limit half-widths of points first+1 .. first+count of a phase (σ of the plotted value)."""
    table = _tables(spec.lam, spec.width).half_width
    idx = np.minimum(np.arange(first, first + count), table.shape[0] - 1)
    out: np.ndarray = table[idx]
    return out


def scan(spec: EwmaSpec, x: np.ndarray, state: EwmaState | None = None) -> tuple[EwmaTrace,
                                                                                  EwmaState]:
    """The EWMA of standardised points `x` continuing from `state` (a fresh phase when None),
    and the state after them; `state` itself is not changed."""
    st = EwmaState() if state is None else state
    x = np.asarray(x, dtype=float)
    n = x.shape[0]
    tab = _tables(spec.lam, spec.width)
    b = tab.block
    if n == 0:
        empty = np.zeros(0)
        no = np.zeros(0, dtype=bool)
        return EwmaTrace(empty, empty, no, no), EwmaState(st.count, st.z_block, st.running, st.z)
    start = st.count % b  # position of the first point in its block
    rows = (start + n + b - 1) // b
    terms = np.zeros(rows * b)
    terms[start : start + n] = x * tab.inverse[(start + np.arange(n)) % b]
    if start:
        terms[start - 1] = st.running  # 0 + … + W + t: the sum goes on from the carried W
    running = np.cumsum(terms.reshape(rows, b), axis=1)
    pn, wt = tab.pow_next_list[b - 1], tab.weight_list[b - 1]
    if pn == 0.0:  # λ = 1: z is the point itself (0·z_b adds at most the sign of a zero)
        zb = np.concatenate(([st.z_block], wt * running[:-1, b - 1]))
    else:  # one step per block of points, the recursion between blocks
        z_before = [st.z_block]
        last_w = running[:, b - 1].tolist()
        for q in range(rows - 1):
            z_before.append(pn * z_before[q] + wt * last_w[q])
        zb = np.array(z_before)
    z = (tab.pow_next[None, :] * zb[:, None] + tab.weight[None, :] * running).ravel()
    z = z[start : start + n]
    half = half_widths(spec, st.count, n)
    end = start + n  # position after the last point, counted from the first row
    count = st.count + n
    if end % b == 0:
        new = EwmaState(count, float(z[-1]), 0.0, float(z[-1]))
    else:
        new = EwmaState(count, float(zb[-1]), float(running.ravel()[end - 1]), float(z[-1]))
    up: np.ndarray = z > half
    down: np.ndarray = z < -half
    return EwmaTrace(z, half, up, down), new


def push(spec: EwmaSpec, x: float, state: EwmaState) -> int:
    """Take one standardised point into `state` (changed in place); +1 fired above, −1 below,
    0 not. The latest statistic is `state.z`."""
    tab = _tables(spec.lam, spec.width)
    p = state.count % tab.block
    term = x * tab.inverse_list[p]
    running = term if p == 0 else state.running + term
    z = tab.pow_next_list[p] * state.z_block + tab.weight_list[p] * running
    half = tab.half_width_list[min(state.count, len(tab.half_width_list) - 1)]
    state.count += 1
    state.z = z
    if p == tab.block - 1:
        state.z_block, state.running = z, 0.0
    else:
        state.running = running
    return 1 if z > half else (-1 if z < -half else 0)


def fired_rows(spec: EwmaSpec, x: np.ndarray) -> np.ndarray:
    """Where the EWMA fires in each row of `x` (independent runs from a fresh phase), stepping
    through the columns with all rows at once: the simulated run lengths' evaluator. Equal to
    `scan` row by row up to rounding (a test holds it to that)."""
    rows, width = x.shape
    lam, a = spec.lam, 1.0 - spec.lam
    half = half_widths(spec, 0, width)
    z = np.zeros(rows)
    out = np.zeros((rows, width), dtype=bool)
    for t in range(width):
        z = lam * x[:, t] + a * z
        out[:, t] = np.abs(z) > half[t]
    return out
