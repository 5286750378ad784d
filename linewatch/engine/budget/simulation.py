"""Seeded Monte-Carlo in-control ARL: for sets with rules that look at the values' order.

Independent standard normal runs, each until the first signal, judged by the vectorised
evaluator of `rules.py`. The relative standard error is about 1/√replicates (run lengths are
near-geometric).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from linewatch.engine.rulebook import WITHIN, RuleSpec

SIMULATION = "simulation"
SIMULATION_LOWER_BOUND = "simulation (lower bound)"

DEFAULT_REPLICATES = 4000
DEFAULT_SEED = 20_240_601
# Work limit of one simulation (points evaluated). Runs still without a signal then count with
# their length so far, and the result is marked as a lower bound.
MAX_SIMULATED_POINTS = 20_000_000


@dataclass(frozen=True, slots=True)
class SimulatedRunLength:
    """A simulated ARL0, its Monte-Carlo standard error and how it was obtained (`method`:
    SIMULATION, or SIMULATION_LOWER_BOUND when the work limit cut some runs short)."""

    arl: float
    method: str
    std_error: float | None


def simulate_run_length(
    specs: list[RuleSpec] | tuple[RuleSpec, ...],
    replicates: int = DEFAULT_REPLICATES,
    seed: int = DEFAULT_SEED,
    max_points: int = MAX_SIMULATED_POINTS,
) -> SimulatedRunLength:
    """Monte-Carlo ARL0 of `specs` (at least one rule): independent standard normal runs, each
    until the first signal, evaluating at most `max_points` points in all.

    Runs are laid end to end in one array and evaluated with `rules.evaluate_classified`, with a
    separator block before each run that, by the rulebook's conventions, carries nothing over
    from the run before: values equal to the run's first value (an equal neighbour breaks trends
    and alternation) and zone marks that break every zone rule (on the centre line, within 1σ —
    and, for the within-1σ rule, outside 1σ). A run with no signal yet is extended and
    re-evaluated.
    """
    specs = tuple(specs)
    if not specs:
        raise ValueError("no rules to simulate")
    rng = np.random.default_rng(seed)
    series = rng.standard_normal((replicates, 256))
    lengths = np.zeros(replicates, np.int64)
    pending = np.arange(replicates)
    spent = 0
    method = SIMULATION
    while pending.size:
        first = first_signals(specs, series)
        spent += series.size
        done = first >= 0
        lengths[pending[done]] = first[done] + 1
        pending, series = pending[~done], series[~done]
        if pending.size and spent + 2 * series.size > max_points:
            lengths[pending] = series.shape[1]  # censored: counts with its length so far
            method = SIMULATION_LOWER_BOUND
            break
        if pending.size:  # no signal yet: extend these runs to twice their length
            series = np.concatenate([series, rng.standard_normal(series.shape)], axis=1)
    arl = float(np.mean(lengths))
    se = float(np.std(lengths, ddof=1) / math.sqrt(replicates)) if replicates > 1 else None
    return SimulatedRunLength(arl, method, se)


def first_signals(specs: tuple[RuleSpec, ...], series: np.ndarray) -> np.ndarray:
    """Index of the first point of each row at which any rule fires (−1 if none)."""
    from linewatch.engine.rules import classify, evaluate_classified  # lazy: only for simulation

    rows, width = series.shape
    gap = max(s.lookback for s in specs)
    total = gap + width
    x = np.empty((rows, total))
    x[:, :gap] = series[:, :1]
    x[:, gap:] = series
    side, level = classify(series.ravel(), 0.0, 1.0)
    sides = np.zeros((rows, total), np.int8)
    sides[:, gap:] = side.reshape(rows, width)
    levels = np.ones((rows, total), np.int8)
    levels[:, gap:] = level.reshape(rows, width)
    flat_x, flat_side, flat_level = x.ravel(), sides.ravel(), levels.ravel()
    outside = levels.copy()
    outside[:, :gap] = 2  # beyond 1σ: breaks a within-1σ run
    fires = np.zeros(rows * total, bool)
    for spec in specs:
        lv = outside.ravel() if spec.kind == WITHIN else flat_level
        fires |= evaluate_classified(spec, flat_x, flat_side, lv)
    hits = fires.reshape(rows, total)[:, gap:]
    return np.where(hits.any(axis=1), hits.argmax(axis=1), -1)
