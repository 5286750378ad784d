"""False-alarm budget: the in-control average run length (ARL0) of a set of run rules.

The chart is a location chart with known limits (CL ± 3σ) and independent normal in-control
points; the run starts with no history, so the start-up conventions of `rulebook.py` apply (a
k-of-m window holds all points so far while fewer than m exist). The run length is the number of
points up to and including the first one at which any rule fires.

- Rules that look only at zones (beyond, side-run, k-of-m, within, mixture) get an exact Markov
  chain: each rule is a small automaton over the point's zone (side × level), the chain runs on
  the reachable product of those automata with indistinguishable states merged, and ARL solves
  (I − Q)·t = 1 (western-electric: 215 states).
- Trend and alternation depend on the values' order, not only their zones; any set containing
  them gets a seeded Monte-Carlo estimate using the vectorised evaluator of `rules.py`.

Expected false alarms per 1,000 points are the long-run rate of alarms on a chart that keeps
running (no restart after a signal): an alarm is a maximal stretch of consecutive points at which
one rule fires, so the rate is the sum over the selected rules of the probability that such a
stretch starts at a point (`alarm_rate`), computed exactly. It is not 1000/ARL: a chart restarted
after each signal would count fewer, since rules often fire together or close behind each other.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from linewatch.engine.distributions import normal_cdf
from linewatch.engine.rulebook import (
    ALTERNATE,
    BEYOND,
    K_OF_M,
    MIXTURE,
    SIDE_RUN,
    TREND,
    WITHIN,
    RuleSpec,
    parse_rule_list,
    resolve_rules,
)

MARKOV = "markov"
SIMULATION = "simulation"
SIMULATION_LOWER_BOUND = "simulation (lower bound)"
NO_RULES = "none"

# Chain limits: beyond these the set is simulated instead (e.g. k-of-m with very long windows).
# Up to _DENSE_STATES (the default sets need under 1,000) numpy solves the system densely, with no
# scipy import; above, a scipy Krylov solver avoids the fill-in that a sparse factorisation of
# these shift-register chains suffers, and its residual is checked.
MAX_CHAIN_STATES = 25_000
_DENSE_STATES = 2_000
_KRYLOV_ITERATIONS = 4_000
_MAX_CODE = 2**62

# Simulation defaults: relative standard error ≈ 1/√replicates (run lengths are near-geometric).
DEFAULT_REPLICATES = 4000
DEFAULT_SEED = 20_240_601
# Work limit of one simulation (points evaluated). Runs still without a signal then count with
# their length so far, and the result is marked as a lower bound.
MAX_SIMULATED_POINTS = 20_000_000

# Zone alphabet of one point: side (+, −) × level (1 within 1σ, 2 in (1σ, 2σ], 3 in (2σ, 3σ],
# 4 beyond 3σ), the same levels as rules.classify. Symbol = 4·(side is −) + (level − 1).
_LEVELS = 4
_SYMBOLS = 2 * _LEVELS
_SYMBOL_SIDE = np.array([+1] * _LEVELS + [-1] * _LEVELS)
_SYMBOL_LEVEL = np.array(list(range(1, _LEVELS + 1)) * 2)

_ZONE_KINDS = frozenset({BEYOND, SIDE_RUN, K_OF_M, WITHIN, MIXTURE})


@dataclass(frozen=True, slots=True)
class BudgetResult:
    """ARL0 of a rule set, its false alarms per 1,000 points, and how the ARL was obtained.

    `false_alarms_per_1000` is the exact long-run alarm rate (see the module notes); `method` and
    `std_error` (the Monte-Carlo standard error, None for the exact chain) describe `arl`.
    """

    arl: float
    false_alarms_per_1000: float
    method: str
    std_error: float | None = None


def average_run_length(specs: list[RuleSpec] | tuple[RuleSpec, ...]) -> BudgetResult:
    """ARL0 of `specs` together: exact chain when possible, else a seeded simulation (cached)."""
    return _cached(tuple(specs))


@lru_cache(maxsize=64)
def _cached(specs: tuple[RuleSpec, ...]) -> BudgetResult:
    if not specs:
        return BudgetResult(math.inf, 0.0, NO_RULES)
    if all(s.kind in _ZONE_KINDS for s in specs):
        arl = markov_run_length(specs)
        if arl is not None:
            return _result(specs, arl, MARKOV)
    known = SIMULATED.get(rule_set_key(specs))
    if known is not None:
        return _result(specs, known[0], SIMULATION, known[1])
    return simulate_run_length(specs)


def rule_set_key(
    specs: list[RuleSpec] | tuple[RuleSpec, ...],
) -> frozenset[tuple[str, int, int, int]]:
    """What decides a set's run length: the rules' kinds and parameters, not ids or order."""
    return frozenset((s.kind, s.length, s.k, s.zone) for s in specs)


def _published_set(text: str) -> frozenset[tuple[str, int, int, int]]:
    return rule_set_key(resolve_rules(parse_rule_list(text)))


# (ARL, standard error) of `simulate_run_length` with the default replicates and seed for the
# simulated sets that `check` meets most, so it need not repeat a ~0.4 s simulation; the tests
# regenerate each pair exactly.
SIMULATED: dict[frozenset[tuple[str, int, int, int]], tuple[float, float]] = {
    _published_set("nelson"): (71.57075, 1.0173477147477898),
    _published_set("nelson,western-electric"): (64.1335, 0.9010199796277673),
}


def _result(
    specs: tuple[RuleSpec, ...], arl: float, method: str, std_error: float | None = None
) -> BudgetResult:
    rate = 1000.0 * math.fsum(alarm_rate(spec) for spec in specs)
    return BudgetResult(arl, rate, method, std_error)


# --- alarms per point in the long run ---------------------------------------------------------


@lru_cache(maxsize=128)
def alarm_rate(spec: RuleSpec) -> float:
    """Long-run probability that an alarm of `spec` starts at an in-control point.

    An alarm is a maximal stretch of consecutive points at which the rule fires, so one starts
    where the rule fires and did not fire at the point before. Exact for every kind:
    - zone rules: the stationary distribution of the rule's automaton (its state depends only on
      the last `lookback` points, so propagating any start that far reaches it exactly);
    - a trend of L points: P(last L monotone) − P(last L + 1 monotone) = 2/L! − 2/(L + 1)!;
    - alternation of L points: 2·A_L/L! − 2·A_{L+1}/(L + 1)!, with A_n the Euler zigzag numbers
      (the count of alternating permutations of n values, starting upwards).
    Rules too large for an automaton (k-of-m with very long windows) fall back to one long seeded
    simulated series.
    """
    if spec.kind in (TREND, ALTERNATE) and spec.length >= 3:
        return _order_rule_rate(spec.kind, spec.length)
    if spec.kind in _ZONE_KINDS and not _too_large(spec):
        return _stationary_start_rate(_automaton(spec), spec.lookback + 2)
    return _streamed_rate(spec)


def _order_rule_rate(kind: str, length: int) -> float:
    from fractions import Fraction

    def p_all(n: int) -> Fraction:
        """P(n consecutive iid continuous values are monotone / alternate, either direction)."""
        ways = 1 if kind == TREND else _zigzag(n)
        return Fraction(2 * ways, math.factorial(n))

    return float(p_all(length) - p_all(length + 1))


def _zigzag(n: int) -> int:
    """Euler zigzag number A_n (alternating permutations of n), by the boustrophedon triangle."""
    row = [1]
    for _ in range(n):
        new = [0]
        for value in reversed(row):
            new.append(new[-1] + value)
        row = new
    return row[-1]


def _stationary_start_rate(auto: _Automaton, steps: int) -> float:
    """P(fires now but not at the point before), once the state has forgotten its start."""
    probs = zone_probabilities()
    size = auto.size
    quiet = np.zeros(size)  # mass of states whose latest point did not fire
    quiet[0] = 1.0
    loud = np.zeros(size)
    for _ in range(steps):
        mass = quiet + loud
        quiet, loud = np.zeros(size), np.zeros(size)
        for sym in range(_SYMBOLS):
            fired = auto.fires[:, sym]
            weight = mass * probs[sym]
            loud += np.bincount(auto.next[fired, sym], weights=weight[fired], minlength=size)
            quiet += np.bincount(auto.next[~fired, sym], weights=weight[~fired], minlength=size)
    return float(sum((quiet * auto.fires[:, sym]).sum() * probs[sym] for sym in range(_SYMBOLS)))


def _streamed_rate(spec: RuleSpec, points: int = 2_000_000, seed: int = DEFAULT_SEED) -> float:
    """Alarm starts per point on one long seeded in-control series (the fallback)."""
    from linewatch.engine.rules import evaluate  # lazy: only for the fallback

    fires = evaluate(spec, np.random.default_rng(seed).standard_normal(points), 0.0, 1.0)
    starts = int(fires[0]) + int(np.count_nonzero(fires[1:] & ~fires[:-1]))
    return starts / points


def _too_large(spec: RuleSpec) -> bool:
    """Whether the rule's own automaton exceeds the chain's size limit."""
    return spec.kind == K_OF_M and spec.length - 1 > math.log(MAX_CHAIN_STATES, 3)


def zone_probabilities() -> np.ndarray:
    """Probability of each zone symbol for one standard normal point (sums to 1).

    Φ is the project's own normal CDF (no scipy on this path); the tests compare with scipy.
    """
    upper = [normal_cdf(-c) for c in (0.0, 1.0, 2.0, 3.0)]  # P(Z > c)
    one_side = np.array([upper[0] - upper[1], upper[1] - upper[2], upper[2] - upper[3], upper[3]])
    return np.concatenate([one_side, one_side])


@dataclass(frozen=True, slots=True)
class _Automaton:
    """One rule as a finite automaton over zone symbols: next state and whether it fires."""

    next: np.ndarray  # [states, symbols] int64
    fires: np.ndarray  # [states, symbols] bool

    @property
    def size(self) -> int:
        return int(self.next.shape[0])


def _automaton(spec: RuleSpec) -> _Automaton:
    """The automaton of one zone rule; state 0 is the empty history."""
    side, level = _SYMBOL_SIDE, _SYMBOL_LEVEL
    match spec.kind:
        case "beyond":
            return _Automaton(np.zeros((1, _SYMBOLS), np.int64), (level == _LEVELS)[None, :])
        case "side-run":
            return _side_run(spec.length, side)
        case "within":
            return _plain_run(spec.length, level == 1)
        case "mixture":
            return _mixture(spec.length, side, level >= 2)
        case "k-of-m":
            return _k_of_m(spec.k, spec.length, side, level > spec.zone)
    raise ValueError(f"rule kind {spec.kind!r} has no zone automaton")


def _plain_run(length: int, hit: np.ndarray) -> _Automaton:
    """`length` symbols in a row with `hit`; state = current run length, capped at length − 1."""
    cap = max(length - 1, 1)
    states = np.arange(cap + 1)[:, None]
    run = np.where(hit[None, :], states + 1, 0)
    return _Automaton(np.minimum(run, cap).astype(np.int64), run >= length)


def _side_run(length: int, side: np.ndarray) -> _Automaton:
    """`length` in a row on one side. State 0: no run; r: run of r above; cap + r: r below."""
    cap = max(length - 1, 1)
    size = 1 + 2 * cap
    nxt = np.zeros((size, _SYMBOLS), np.int64)
    fires = np.zeros((size, _SYMBOLS), bool)
    for state in range(size):
        cur_side = 0 if state == 0 else (+1 if state <= cap else -1)
        cur_run = 0 if state == 0 else (state if state <= cap else state - cap)
        for sym in range(_SYMBOLS):
            s = int(side[sym])
            run = cur_run + 1 if s == cur_side else 1
            fires[state, sym] = run >= length
            kept = min(run, cap)
            nxt[state, sym] = kept if s > 0 else cap + kept
    return _Automaton(nxt, fires)


def _mixture(length: int, side: np.ndarray, beyond: np.ndarray) -> _Automaton:
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
    nxt = np.zeros((len(index), _SYMBOLS), np.int64)
    fires = np.zeros((len(index), _SYMBOLS), bool)
    for (run, s, streak), state in index.items():
        for sym in range(_SYMBOLS):
            if not beyond[sym]:
                continue  # next state 0, no fire
            new_side = int(side[sym])
            new_run = run + 1
            new_streak = streak + 1 if new_side == s else 1
            fires[state, sym] = new_run >= length and new_streak < length
            nxt[state, sym] = index[(min(new_run, cap), new_side, min(new_streak, cap))]
    return _Automaton(nxt, fires)


def _k_of_m(k: int, m: int, side: np.ndarray, beyond: np.ndarray) -> _Automaton:
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
    nxt = np.zeros((size, _SYMBOLS), np.int64)
    fires = np.zeros((size, _SYMBOLS), bool)
    for sym in range(_SYMBOLS):
        d = int(mark[sym])
        if width:
            nxt[:, sym] = (np.arange(size) % 3 ** (width - 1)) * 3 + d
        if d:
            fires[:, sym] = (digits == d).sum(axis=1) + 1 >= k
    return _Automaton(nxt, fires)


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
        nxt = np.zeros((codes.size, _SYMBOLS), np.int64)
        fire = np.zeros((codes.size, _SYMBOLS), bool)
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


def _unique_automata(specs: list[RuleSpec] | tuple[RuleSpec, ...]) -> list[_Automaton] | None:
    """Automata of the distinct zone rules (two rules with equal parameters fire together).

    None when one of them alone would exceed the chain's size limit.
    """
    seen: dict[tuple[str, int, int, int], _Automaton] = {}
    for s in specs:
        key = (s.kind, s.length, s.k, s.zone)
        if key in seen:
            continue
        if _too_large(s):
            return None
        seen[key] = _automaton(s)
    return list(seen.values())


# --- seeded simulation ----------------------------------------------------------------------


def simulate_run_length(
    specs: list[RuleSpec] | tuple[RuleSpec, ...],
    replicates: int = DEFAULT_REPLICATES,
    seed: int = DEFAULT_SEED,
) -> BudgetResult:
    """Monte-Carlo ARL0: independent standard normal runs, each until the first signal.

    Runs are laid end to end in one array and evaluated with `rules.evaluate_classified`, with a
    separator block before each run that, by the rulebook's conventions, carries nothing over
    from the run before: values equal to the run's first value (an equal neighbour breaks trends
    and alternation) and zone marks that break every zone rule (on the centre line, within 1σ —
    and, for the within-1σ rule, outside 1σ). A run with no signal yet is extended and
    re-evaluated.
    """
    specs = tuple(specs)
    if not specs:
        return BudgetResult(math.inf, 0.0, NO_RULES)
    rng = np.random.default_rng(seed)
    series = rng.standard_normal((replicates, 256))
    lengths = np.zeros(replicates, np.int64)
    pending = np.arange(replicates)
    spent = 0
    method = SIMULATION
    while pending.size:
        first = _first_signals(specs, series)
        spent += series.size
        done = first >= 0
        lengths[pending[done]] = first[done] + 1
        pending, series = pending[~done], series[~done]
        if pending.size and spent + 2 * series.size > MAX_SIMULATED_POINTS:
            lengths[pending] = series.shape[1]  # censored: counts with its length so far
            method = SIMULATION_LOWER_BOUND
            break
        if pending.size:  # no signal yet: extend these runs to twice their length
            series = np.concatenate([series, rng.standard_normal(series.shape)], axis=1)
    arl = float(np.mean(lengths))
    se = float(np.std(lengths, ddof=1) / math.sqrt(replicates)) if replicates > 1 else None
    return _result(specs, arl, method, se)


def _first_signals(specs: tuple[RuleSpec, ...], series: np.ndarray) -> np.ndarray:
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
