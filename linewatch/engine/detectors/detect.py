"""Both detectors behind one interface, for the batch path and the live engine.

A detector's firing at a point is recorded with its side (`UP` above the centre, `DOWN` below).
`run` evaluates a chunk of plotted values (any length, one numpy pass) and `push_point` one
value; both continue a `DetectorState` that `to_json` / `state_from_json` carry across a
restart. A new phase starts from `new_state`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from linewatch.engine.detectors import cusum, ewma
from linewatch.engine.detectors.cusum import CusumState, CusumTrace
from linewatch.engine.detectors.ewma import EwmaState, EwmaTrace
from linewatch.engine.rulebook import CusumSpec, DetectorSpec, EwmaSpec

UP = "up"
DOWN = "down"

DetectorState = EwmaState | CusumState
DetectorTrace = EwmaTrace | CusumTrace


@dataclass(frozen=True, slots=True)
class DetectorFiring:
    """A detector fired at position `at` of the evaluated chunk, on `side` (UP or DOWN)."""

    rule: str
    at: int
    side: str


def standardise(
    x: np.ndarray | Sequence[float], center: float, sigma: float | np.ndarray
) -> np.ndarray:
    """(x − centre)/σ: the detectors' input; σ may be one value or one per point."""
    z: np.ndarray = (np.asarray(x, dtype=float) - center) / np.asarray(sigma, dtype=float)
    return z


def new_state(spec: DetectorSpec) -> DetectorState:
    """The state at the start of a phase."""
    if isinstance(spec, CusumSpec):
        return CusumState.fresh(spec)
    return EwmaState()


def run(
    spec: DetectorSpec, z: np.ndarray, state: DetectorState | None = None
) -> tuple[DetectorTrace, DetectorState]:
    """The detector's statistics and firings over standardised points `z`, from `state` (a new
    phase when None), and the state after them (the given state is left as it was)."""
    if isinstance(spec, CusumSpec):
        assert state is None or isinstance(state, CusumState)
        return cusum.scan(spec, z, state)
    assert state is None or isinstance(state, EwmaState)
    return ewma.scan(spec, z, state)


def push_point(spec: DetectorSpec, z: float, state: DetectorState) -> list[str]:
    """Take one standardised point into `state` (in place); the sides on which it fired."""
    if isinstance(spec, CusumSpec):
        assert isinstance(state, CusumState)
        up, down = cusum.push(spec, z, state)
        return [side for side, hit in ((UP, up), (DOWN, down)) if hit]
    assert isinstance(state, EwmaState)
    hit = ewma.push(spec, z, state)
    return [UP] if hit > 0 else ([DOWN] if hit < 0 else [])


def firings(spec: DetectorSpec, trace: DetectorTrace) -> list[DetectorFiring]:
    """The firings of a trace in point order (UP before DOWN at a point where both fire)."""
    both = np.flatnonzero(trace.up | trace.down)
    out: list[DetectorFiring] = []
    for at in both.tolist():
        if trace.up[at]:
            out.append(DetectorFiring(spec.id, at, UP))
        if trace.down[at]:
            out.append(DetectorFiring(spec.id, at, DOWN))
    return out


def state_to_json(state: DetectorState) -> dict[str, Any]:
    """A JSON-ready form of `state`."""
    return state.to_json()


def state_from_json(spec: DetectorSpec, d: dict[str, Any]) -> DetectorState:
    """The state saved by `state_to_json` for `spec`."""
    if isinstance(spec, CusumSpec):
        return CusumState.from_json(d)
    return EwmaState.from_json(d)


def statistic_now(state: DetectorState) -> tuple[float, float | None]:
    """The latest statistic: (z, None) for EWMA, (C⁺, C⁻) for CUSUM."""
    if isinstance(state, CusumState):
        return state.upper, state.lower
    return state.z, None


def limits_of(spec: DetectorSpec) -> tuple[float, float | None, bool]:
    """The chart's asymptotic limits in σ of the plotted statistic: (upper, lower, widening).

    EWMA: ±L·√(λ/(2 − λ)), widening at the start of a phase; CUSUM: h (lower: none)."""
    if isinstance(spec, EwmaSpec):
        half = spec.asymptotic_half_width
        return half, -half, True
    return spec.h, None, False
