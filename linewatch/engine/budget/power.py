"""Detection power of a rule set: its ARL at sustained mean shifts, with known limits.

The shift is in σ of the plotted statistic (individual values, or subgroup means: a shift of δ
individual σ is δ·√n of the means' σ, `plotted_shift`). Each ARL comes from the most exact
method the set allows:
- zone rules only: the exact Markov chain of `chain` (the same chain as the false-alarm
  budget, solved with the shifted zone probabilities);
- the CUSUM alone (no head start): Brook & Evans (`cusum_chain`);
- the EWMA alone: Lucas & Saccucci's chain with the chart's exact time-varying limits
  (`ewma_chain`);
- anything else (order rules, detectors with other rules or each other, CUSUM with a head
  start): a seeded simulation with its standard error (`simulation`); at zero shift the stored
  simulations of the common sets (`rates.SIMULATED`) are used.
Results are cached per parameter set and shift.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

from linewatch.engine.budget.automata import ZONE_KINDS
from linewatch.engine.budget.chain import MARKOV, markov_run_length
from linewatch.engine.budget.cusum_chain import cusum_run_length
from linewatch.engine.budget.ewma_chain import ewma_run_length
from linewatch.engine.budget.rates import NO_RULES, SIMULATED, rule_set_key
from linewatch.engine.budget.simulation import simulate_run_length
from linewatch.engine.rulebook import CusumSpec, DetectorSpec, EwmaSpec, RuleSpec

SHIFTS = (0.0, 0.5, 1.0, 1.5, 2.0, 3.0)
BROOK_EVANS = "markov (Brook & Evans)"
LUCAS_SACCUCCI = "markov (Lucas & Saccucci)"
SHIFTED_FIRST_WIDTH = 16


@dataclass(frozen=True, slots=True)
class ShiftRunLength:
    """The ARL at a mean shift of `shift` σ of the plotted statistic: points to the first
    signal on average (at 0: to the first false alarm), how it was obtained and, for a
    simulation, its standard error."""

    shift: float
    arl: float
    method: str
    std_error: float | None = None


def plotted_shift(shift_in_individual_sigma: float, subgroup_size: int) -> float:
    """A shift of the individual values (in their σ) in σ of the subgroup means: δ·√n."""
    return shift_in_individual_sigma * math.sqrt(subgroup_size)


def detection_power(
    rules: Sequence[RuleSpec],
    detectors: Sequence[DetectorSpec] = (),
    shifts: Sequence[float] = SHIFTS,
) -> tuple[ShiftRunLength, ...]:
    """The ARL of `rules` and `detectors` together at each of `shifts` (cached per set)."""
    key = _rules_key(rules)
    dets = tuple(sorted(set(detectors), key=repr))
    return tuple(_at_shift(key, dets, float(s)) for s in shifts)


def _rules_key(rules: Sequence[RuleSpec]) -> tuple[RuleSpec, ...]:
    """The rules by parameters only (ids and order do not change a run length)."""
    unique = {(r.kind, r.length, r.k, r.zone) for r in rules}
    return tuple(RuleSpec("", kind, length, k, zone) for kind, length, k, zone in sorted(unique))


@lru_cache(maxsize=1024)
def _at_shift(rules: tuple[RuleSpec, ...], detectors: tuple[DetectorSpec, ...],
              shift: float) -> ShiftRunLength:
    if not rules and not detectors:
        return ShiftRunLength(shift, math.inf, NO_RULES)
    if not detectors and all(r.kind in ZONE_KINDS for r in rules):
        arl = markov_run_length(rules, shift)
        if arl is not None:
            return ShiftRunLength(shift, arl, MARKOV)
    if not rules and len(detectors) == 1:
        det = detectors[0]
        if isinstance(det, EwmaSpec):
            return ShiftRunLength(shift, ewma_run_length(det, shift), LUCAS_SACCUCCI)
        if isinstance(det, CusumSpec) and det.headstart == 0.0:
            return ShiftRunLength(shift, cusum_run_length(det.k, det.h, shift), BROOK_EVANS)
    if shift == 0.0 and not detectors:
        known = SIMULATED.get(rule_set_key(rules))
        if known is not None:
            return ShiftRunLength(shift, known[0], "simulation", known[1])
    # runs under a shift are short: start them short (they double while no signal came)
    width = 256 if shift == 0.0 else SHIFTED_FIRST_WIDTH
    sim = simulate_run_length(rules, shift=shift, detectors=detectors, first_width=width)
    return ShiftRunLength(shift, sim.arl, sim.method, sim.std_error)


def clear_caches() -> None:
    """Forget cached results (a benchmark times a computation from cold)."""
    from linewatch.engine.budget import chain, cusum_chain, ewma_chain, rates

    _at_shift.cache_clear()
    chain._structure.cache_clear()
    cusum_chain.one_sided_run_length.cache_clear()
    ewma_chain.ewma_run_length.cache_clear()
    rates.clear_caches()
