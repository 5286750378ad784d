"""Each zone rule as a finite automaton over the zone of a point, and the zones' probabilities.

A point's zone is its side (+, −) and level (1 within 1σ, 2 in (1σ, 2σ], 3 in (2σ, 3σ], 4 beyond
3σ), the same levels as `rules.classify`. The exact chain (`chain`) runs on products of these
automata; the long-run rates (`rates`) on each one alone.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from linewatch.engine.distributions import normal_cdf
from linewatch.engine.rulebook import BEYOND, K_OF_M, MIXTURE, SIDE_RUN, WITHIN, RuleSpec

# Beyond this many states a chain is not built (the set is simulated instead), e.g. k-of-m with
# very long windows.
MAX_CHAIN_STATES = 25_000

# Zone alphabet of one point: symbol = 4·(side is −) + (level − 1).
LEVELS = 4
SYMBOLS = 2 * LEVELS
SYMBOL_SIDE = np.array([+1] * LEVELS + [-1] * LEVELS)
SYMBOL_LEVEL = np.array(list(range(1, LEVELS + 1)) * 2)

ZONE_KINDS = frozenset({BEYOND, SIDE_RUN, K_OF_M, WITHIN, MIXTURE})


def zone_probabilities() -> np.ndarray:
    """Probability of each zone symbol for one standard normal point (sums to 1).

    Φ is the project's own normal CDF (no scipy on this path); the tests compare with scipy.
    """
    upper = [normal_cdf(-c) for c in (0.0, 1.0, 2.0, 3.0)]  # P(Z > c)
    one_side = np.array([upper[0] - upper[1], upper[1] - upper[2], upper[2] - upper[3], upper[3]])
    return np.concatenate([one_side, one_side])


@dataclass(frozen=True, slots=True)
class Automaton:
    """One rule as a finite automaton over zone symbols: next state and whether it fires."""

    next: np.ndarray  # [states, symbols] int64
    fires: np.ndarray  # [states, symbols] bool

    @property
    def size(self) -> int:
        return int(self.next.shape[0])


def too_large(spec: RuleSpec) -> bool:
    """Whether the rule's own automaton exceeds the chain's size limit."""
    return spec.kind == K_OF_M and spec.length - 1 > math.log(MAX_CHAIN_STATES, 3)


def automaton(spec: RuleSpec) -> Automaton:
    """The automaton of one zone rule; state 0 is the empty history."""
    side, level = SYMBOL_SIDE, SYMBOL_LEVEL
    match spec.kind:
        case "beyond":
            return Automaton(np.zeros((1, SYMBOLS), np.int64), (level == LEVELS)[None, :])
        case "side-run":
            return _side_run(spec.length, side)
        case "within":
            return _plain_run(spec.length, level == 1)
        case "mixture":
            return _mixture(spec.length, side, level >= 2)
        case "k-of-m":
            return _k_of_m(spec.k, spec.length, side, level > spec.zone)
    raise ValueError(f"rule kind {spec.kind!r} has no zone automaton")


def _plain_run(length: int, hit: np.ndarray) -> Automaton:
    """`length` symbols in a row with `hit`; state = current run length, capped at length − 1."""
    cap = max(length - 1, 1)
    states = np.arange(cap + 1)[:, None]
    run = np.where(hit[None, :], states + 1, 0)
    return Automaton(np.minimum(run, cap).astype(np.int64), run >= length)


def _side_run(length: int, side: np.ndarray) -> Automaton:
    """`length` in a row on one side. State 0: no run; r: run of r above; cap + r: r below."""
    cap = max(length - 1, 1)
    size = 1 + 2 * cap
    nxt = np.zeros((size, SYMBOLS), np.int64)
    fires = np.zeros((size, SYMBOLS), bool)
    for state in range(size):
        cur_side = 0 if state == 0 else (+1 if state <= cap else -1)
        cur_run = 0 if state == 0 else (state if state <= cap else state - cap)
        for sym in range(SYMBOLS):
            s = int(side[sym])
            run = cur_run + 1 if s == cur_side else 1
            fires[state, sym] = run >= length
            kept = min(run, cap)
            nxt[state, sym] = kept if s > 0 else cap + kept
    return Automaton(nxt, fires)


def _mixture(length: int, side: np.ndarray, beyond: np.ndarray) -> Automaton:
    """`length` in a row beyond 1σ with both sides among them.

    State (r, s, c): the run of points beyond 1σ (r, capped at `length`), the side of the latest
    point (s) and how many of the latest points in a row share that side (c, capped likewise).
    The last `length` points are all beyond with both sides present exactly when the run reaches
    `length` and the same-side streak is shorter than `length`.
    """
    cap = max(length, 1)
    index: dict[tuple[int, int, int], int] = {(0, 0, 0): 0}
    for run in range(1, cap + 1):
        for s in (+1, -1):
            for streak in range(1, run + 1):
                index[(run, s, streak)] = len(index)
    nxt = np.zeros((len(index), SYMBOLS), np.int64)
    fires = np.zeros((len(index), SYMBOLS), bool)
    for (run, s, streak), state in index.items():
        for sym in range(SYMBOLS):
            if not beyond[sym]:
                continue  # next state 0, no fire
            new_side = int(side[sym])
            new_run = run + 1
            new_streak = streak + 1 if new_side == s else 1
            fires[state, sym] = new_run >= length and new_streak < length
            nxt[state, sym] = index[(min(new_run, cap), new_side, min(new_streak, cap))]
    return Automaton(nxt, fires)


def _k_of_m(k: int, m: int, side: np.ndarray, beyond: np.ndarray) -> Automaton:
    """`k` of the last `m` beyond on one side, the new point among them.

    State: the last m − 1 points as base-3 digits (0 neither, 1 beyond above, 2 beyond below),
    oldest first. Starting from all zeros is exactly the convention that the window holds all
    points so far while fewer than m exist.
    """
    width = max(m - 1, 0)
    size = 3**width
    digits = np.zeros((size, width), np.int64)
    for pos in range(width):
        digits[:, pos] = (np.arange(size) // 3 ** (width - 1 - pos)) % 3
    mark = np.where(beyond, np.where(side > 0, 1, 2), 0)  # digit of each symbol
    nxt = np.zeros((size, SYMBOLS), np.int64)
    fires = np.zeros((size, SYMBOLS), bool)
    for sym in range(SYMBOLS):
        d = int(mark[sym])
        if width:
            nxt[:, sym] = (np.arange(size) % 3 ** (width - 1)) * 3 + d
        if d:
            fires[:, sym] = (digits == d).sum(axis=1) + 1 >= k
    return Automaton(nxt, fires)
