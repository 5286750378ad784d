"""The public false-alarm budget of a rule set: its in-control ARL and long-run alarm rate.

`average_run_length` takes the exact chain (`chain`) when every rule looks only at zones and the
chain is small enough, else the stored simulation of a common set (`SIMULATED`), else a fresh
seeded one (`simulation`). The false alarms per 1,000 points are the long-run rate of alarm
starts (see the package notes), exact for every kind (`alarm_rate`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from linewatch.engine.budget.automata import (
    SYMBOLS,
    ZONE_KINDS,
    Automaton,
    automaton,
    too_large,
    zone_probabilities,
)
from linewatch.engine.budget.chain import MARKOV, markov_run_length
from linewatch.engine.budget.simulation import DEFAULT_SEED, SIMULATION, simulate_run_length
from linewatch.engine.rulebook import ALTERNATE, TREND, RuleSpec, parse_rule_list, resolve_rules

NO_RULES = "none"


@dataclass(frozen=True, slots=True)
class BudgetResult:
    """ARL0 of a rule set, its false alarms per 1,000 points, and how the ARL was obtained.

    `false_alarms_per_1000` is the exact long-run alarm rate (see the package notes); `method` and
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
    if all(s.kind in ZONE_KINDS for s in specs):
        arl = markov_run_length(specs)
        if arl is not None:
            return _result(specs, arl, MARKOV)
    known = SIMULATED.get(rule_set_key(specs))
    if known is not None:
        return _result(specs, known[0], SIMULATION, known[1])
    sim = simulate_run_length(specs)
    return _result(specs, sim.arl, sim.method, sim.std_error)


def rule_set_key(
    specs: list[RuleSpec] | tuple[RuleSpec, ...],
) -> frozenset[tuple[str, int, int, int]]:
    """What decides a set's run length: the rules' kinds and parameters, not ids or order."""
    return frozenset((s.kind, s.length, s.k, s.zone) for s in specs)


def _named_set(text: str) -> frozenset[tuple[str, int, int, int]]:
    return rule_set_key(resolve_rules(parse_rule_list(text)))


# (ARL, standard error) of `simulate_run_length` with the default replicates and seed for the
# simulated sets that `check` meets most, so it need not repeat a ~0.4 s simulation; the tests
# regenerate each pair exactly from the seed and check the ARL by an independent method.
SIMULATED: dict[frozenset[tuple[str, int, int, int]], tuple[float, float]] = {
    _named_set("nelson"): (71.57075, 1.0173477147477898),
    _named_set("nelson,western-electric"): (64.1335, 0.9010199796277673),
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
    if spec.kind in ZONE_KINDS and not too_large(spec):
        return _stationary_start_rate(automaton(spec), spec.lookback + 2)
    return _streamed_rate(spec)


def _order_rule_rate(kind: str, length: int) -> float:
    from fractions import Fraction

    def p_all(n: int) -> Fraction:
        """P(n consecutive iid continuous values are monotone / alternate, either direction)."""
        ways = 1 if kind == TREND else zigzag(n)
        return Fraction(2 * ways, math.factorial(n))

    return float(p_all(length) - p_all(length + 1))


def zigzag(n: int) -> int:
    """Euler zigzag number A_n (alternating permutations of n), by the boustrophedon triangle."""
    row = [1]
    for _ in range(n):
        new = [0]
        for value in reversed(row):
            new.append(new[-1] + value)
        row = new
    return row[-1]


def _stationary_start_rate(auto: Automaton, steps: int) -> float:
    """P(fires now but not at the point before), once the state has forgotten its start."""
    probs = zone_probabilities()
    size = auto.size
    quiet = np.zeros(size)  # mass of states whose latest point did not fire
    quiet[0] = 1.0
    loud = np.zeros(size)
    for _ in range(steps):
        mass = quiet + loud
        quiet, loud = np.zeros(size), np.zeros(size)
        for sym in range(SYMBOLS):
            fired = auto.fires[:, sym]
            weight = mass * probs[sym]
            loud += np.bincount(auto.next[fired, sym], weights=weight[fired], minlength=size)
            quiet += np.bincount(auto.next[~fired, sym], weights=weight[~fired], minlength=size)
    return float(sum((quiet * auto.fires[:, sym]).sum() * probs[sym] for sym in range(SYMBOLS)))


def _streamed_rate(spec: RuleSpec, points: int = 2_000_000, seed: int = DEFAULT_SEED) -> float:
    """Alarm starts per point on one long seeded in-control series (the fallback)."""
    from linewatch.engine.rules import evaluate  # lazy: only for the fallback

    fires = evaluate(spec, np.random.default_rng(seed).standard_normal(points), 0.0, 1.0)
    starts = int(fires[0]) + int(np.count_nonzero(fires[1:] & ~fires[:-1]))
    return starts / points


def clear_caches() -> None:
    """Forget cached results (a benchmark times a computation from cold)."""
    _cached.cache_clear()
    alarm_rate.cache_clear()
