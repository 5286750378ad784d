"""The exact in-control ARL of zone rules together: a Markov chain on their automata.

The chain runs on the reachable product of the rules' automata (`automata`), breadth first from
the empty history, with states that no zone sequence can tell apart merged; the ARL solves
(I − Q)·t = 1. Up to `_DENSE_STATES` (the default sets need under 1,000) numpy solves the system
densely, with no scipy import; above, a scipy Krylov solver avoids the fill-in that a sparse
factorisation of these shift-register chains suffers, and its residual is checked.
"""

from __future__ import annotations

import math

import numpy as np

from linewatch.engine.budget.automata import (
    MAX_CHAIN_STATES,
    SYMBOLS,
    Automaton,
    automaton,
    too_large,
    zone_probabilities,
)
from linewatch.engine.rulebook import RuleSpec

MARKOV = "markov"

_DENSE_STATES = 2_000
_KRYLOV_ITERATIONS = 4_000
_MAX_CODE = 2**62


def markov_run_length(specs: list[RuleSpec] | tuple[RuleSpec, ...]) -> float | None:
    """Exact ARL0 of zone-only rules together; None when the chain would be too large."""
    autos = _unique_automata(specs)
    if autos is None:
        return None
    if not autos:
        return math.inf
    sizes = [a.size for a in autos]
    if math.prod(sizes) >= _MAX_CODE:
        return None
    radix = np.cumprod([1, *sizes[:-1]]).astype(np.int64)  # code = Σ state_r · radix_r

    def step(codes: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Next codes [n, symbols] and whether any rule fires [n, symbols]."""
        nxt = np.zeros((codes.size, SYMBOLS), np.int64)
        fire = np.zeros((codes.size, SYMBOLS), bool)
        for auto, size, base in zip(autos, sizes, radix, strict=True):
            state = (codes // base) % size
            nxt += auto.next[state] * base
            fire |= auto.fires[state]
        return nxt, fire

    # reachable states without a signal, breadth first from the empty history (code 0)
    known = np.zeros(1, np.int64)
    frontier = known
    while frontier.size:
        nxt, fire = step(frontier)
        fresh = np.unique(nxt[~fire])
        frontier = np.setdiff1d(fresh, known, assume_unique=True)
        known = np.union1d(known, frontier)
        if known.size > MAX_CHAIN_STATES:
            return None

    nxt, fire = step(known)
    target = np.where(fire, -1, np.searchsorted(known, nxt))  # −1: the chain signals
    group, reps = _merge_equivalent(target)
    target = target[reps]
    prob = np.broadcast_to(zone_probabilities(), target.shape)
    keep = target >= 0
    rows = np.broadcast_to(np.arange(reps.size)[:, None], target.shape)[keep]
    cols = group[target[keep]]
    t = _expected_steps(reps.size, rows, cols, prob[keep])
    return None if t is None else float(t[group[0]])  # code 0 (the empty history) sorts first


def _merge_equivalent(target: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Merge states that no symbol sequence can tell apart (Moore's partition refinement).

    `target[s, symbol]` is the next state, or −1 where the chain signals. Returns each state's
    group and one representative state per group; the merged chain has the same run lengths.
    """
    signals = target < 0
    group = np.unique(signals, axis=0, return_inverse=True)[1].ravel()
    count = int(group.max()) + 1
    while True:
        signature = np.column_stack([group, np.where(signals, -1, group[target])])
        group = np.unique(signature, axis=0, return_inverse=True)[1].ravel()
        new_count = int(group.max()) + 1
        if new_count == count:
            break
        count = new_count
    reps = np.zeros(count, np.int64)
    reps[group] = np.arange(group.size)
    return group, reps


def _expected_steps(
    size: int, rows: np.ndarray, cols: np.ndarray, probs: np.ndarray
) -> np.ndarray | None:
    """Solve (I − Q)·t = 1, Q[rows, cols] += probs: expected points to the first signal."""
    ones = np.ones(size)
    if size <= _DENSE_STATES:
        a = np.eye(size)
        np.subtract.at(a, (rows, cols), probs)
        return np.linalg.solve(a, ones)
    from scipy.sparse import csr_matrix, identity  # lazy: only for large chains
    from scipy.sparse.linalg import bicgstab

    q = csr_matrix((probs, (rows, cols)), shape=(size, size))
    a = (identity(size, format="csr") - q).tocsr()
    t, info = bicgstab(a, ones, rtol=1e-13, atol=0.0, maxiter=_KRYLOV_ITERATIONS)
    if info != 0 or np.linalg.norm(a @ t - ones) > 1e-9 * math.sqrt(size):
        return None
    return np.asarray(t)


def _unique_automata(specs: list[RuleSpec] | tuple[RuleSpec, ...]) -> list[Automaton] | None:
    """Automata of the distinct zone rules (two rules with equal parameters fire together).

    None when one of them alone would exceed the chain's size limit.
    """
    seen: dict[tuple[str, int, int, int], Automaton] = {}
    for s in specs:
        key = (s.kind, s.length, s.k, s.zone)
        if key in seen:
            continue
        if too_large(s):
            return None
        seen[key] = automaton(s)
    return list(seen.values())
