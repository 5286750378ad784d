"""The one definition of every run rule: its id, kind, parameters and plain-language meaning.

Both evaluators (vectorised in `rules.py`, incremental in `stream.py`) and the false-alarm budget
(`budget/`) read these specs; none of them hard-codes a rule's numbers.

Conventions (tests pin each one):
- z = (x − CL)/σ of the plotted statistic; "beyond kσ" is |z| > k on the named side (a point exactly
  on a limit is not beyond); "within 1σ" is |z| ≤ 1.
- A point exactly on the centre line is on neither side: it breaks one-side runs.
- Trends and alternation use strict inequalities; an equal neighbour breaks them. A trend of length
  6 is 6 points (5 increases).
- A k-of-m test fires at point i when, among the last m points (all points so far if fewer than m
  exist), at least k are beyond on one side and point i is itself one of them.
- A run test fires at every point where a run of at least its length ends.
- The mixture test (n8) fires at point i when the last L points are all beyond 1σ and lie on both
  sides of the centre line.
- Dispersion charts get only the beyond-limits test (`n1`/`we1`) of the selected sets.

Detectors (`ewma`, `cusum`) are rule ids too, listed beside the run rules, but they are not
`RuleSpec`s: a run rule's verdict depends on its last `lookback` points only, so its state is
rebuilt by replaying them, while a detector's statistic remembers every point of the phase and
has real-valued parameters. Each has its own spec (`EwmaSpec`, `CusumSpec`) and is evaluated by
`engine.detectors`, on the location statistic standardised by its σ (target: the centre line):
- EWMA: z_i = λ·x_i + (1 − λ)·z_{i−1}, z_0 = 0; fires where |z_i| is strictly beyond the exact
  time-varying limit L·√(λ/(2 − λ)·(1 − (1 − λ)^{2i})) (i = 1 at the first point).
- CUSUM: C⁺_i = max(0, x_i − k + C⁺_{i−1}), C⁻_i = max(0, −x_i − k + C⁻_{i−1}), both starting
  at the head start; fires (side up / down) where C⁺ > h or C⁻ > h; no reset after a signal.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, replace

from linewatch.domain.errors import RuleListError

# Rule kinds: the evaluators implement exactly these.
BEYOND = "beyond"  # one point beyond the 3σ limits
SIDE_RUN = "side-run"  # `length` in a row on one side of CL
TREND = "trend"  # `length` in a row steadily increasing or decreasing
ALTERNATE = "alternate"  # `length` in a row alternating up and down
K_OF_M = "k-of-m"  # `k` of the last `m` beyond `zone`σ on one side
WITHIN = "within"  # `length` in a row within 1σ
MIXTURE = "mixture"  # `length` in a row beyond 1σ, on both sides


@dataclass(frozen=True, slots=True)
class RuleSpec:
    """One run rule. `length` is the run length (or `m` for k-of-m); `k` and `zone` for k-of-m."""

    id: str
    kind: str
    length: int = 1
    k: int = 0
    zone: int = 0
    title: str = ""

    @property
    def lookback(self) -> int:
        """How many of the most recent points decide whether the rule fires now."""
        return max(self.length, 1)

    def describe(self) -> str:
        """The rule in plain words, with its current parameters."""
        match self.kind:
            case "beyond":
                return "a point outside the control limits"
            case "side-run":
                return f"{self.length} points in a row on one side of the centre line"
            case "trend":
                return f"{self.length} points in a row steadily rising or falling"
            case "alternate":
                return f"{self.length} points in a row alternating up and down"
            case "k-of-m":
                return (
                    f"{self.k} of {self.length} points more than {self.zone}σ from the centre, "
                    "same side"
                )
            case "within":
                return (
                    f"{self.length} points in a row within 1σ of the centre "
                    "(too little variation)"
                )
            case "mixture":
                return f"{self.length} points in a row beyond 1σ, on both sides (a mixture)"
        return self.id


# Nelson, J. Quality Technology 16(4), 1984; Western Electric, Statistical Quality Control
# Handbook, 1956.
RULES: dict[str, RuleSpec] = {
    spec.id: spec
    for spec in (
        RuleSpec("n1", BEYOND, 1),
        RuleSpec("n2", SIDE_RUN, 9),
        RuleSpec("n3", TREND, 6),
        RuleSpec("n4", ALTERNATE, 14),
        RuleSpec("n5", K_OF_M, 3, k=2, zone=2),
        RuleSpec("n6", K_OF_M, 5, k=4, zone=1),
        RuleSpec("n7", WITHIN, 15),
        RuleSpec("n8", MIXTURE, 8),
        RuleSpec("we1", BEYOND, 1),
        RuleSpec("we2", K_OF_M, 3, k=2, zone=2),
        RuleSpec("we3", K_OF_M, 5, k=4, zone=1),
        RuleSpec("we4", SIDE_RUN, 8),
    )
}

RULE_SETS: dict[str, tuple[str, ...]] = {
    "nelson": ("n1", "n2", "n3", "n4", "n5", "n6", "n7", "n8"),
    "western-electric": ("we1", "we2", "we3", "we4"),
}
DEFAULT_RULES = "western-electric"


# Detector kinds, evaluated by `engine.detectors`.
EWMA = "ewma"
CUSUM = "cusum"


@dataclass(frozen=True, slots=True)
class EwmaSpec:
    """The EWMA detector: smoothing weight `lam` (λ) and limit width `width` (L, in σ of the
    EWMA statistic's asymptotic spread). Defaults: Lucas & Saccucci, Technometrics 32(1), 1990
    (in-control ARL about 500 with asymptotic limits)."""

    lam: float = 0.2
    width: float = 2.962
    id: str = EWMA
    kind: str = EWMA

    @property
    def asymptotic_half_width(self) -> float:
        """L·√(λ/(2 − λ)): the limits' half-width (in σ of the plotted statistic) they widen to."""
        return self.width * math.sqrt(self.lam / (2.0 - self.lam))

    def describe(self) -> str:
        return f"EWMA (λ = {self.lam:g}, L = {self.width:g}) beyond its limits"


@dataclass(frozen=True, slots=True)
class CusumSpec:
    """The two-sided tabular CUSUM: reference value `k` and decision interval `h` (in σ of the
    plotted statistic), head start `headstart` (fast initial response, Lucas & Crosier,
    Technometrics 24(3), 1982; h/2 is their choice). Defaults k = ½, h = 5 (in-control ARL
    about 465: Montgomery, Introduction to Statistical Quality Control, the CUSUM ARL table)."""

    k: float = 0.5
    h: float = 5.0
    headstart: float = 0.0
    id: str = CUSUM
    kind: str = CUSUM

    def describe(self) -> str:
        start = f", head start {self.headstart:g}" if self.headstart else ""
        return f"CUSUM (k = {self.k:g}, h = {self.h:g}{start}) above its decision interval"


DetectorSpec = EwmaSpec | CusumSpec

DETECTORS: dict[str, DetectorSpec] = {EWMA: EwmaSpec(), CUSUM: CusumSpec()}

# Option names of each detector (config tables `ewma = {...}`, `cusum = {...}`) -> spec field,
# with the allowed range (inclusive) of each.
DETECTOR_OPTIONS: dict[str, dict[str, tuple[str, float, float]]] = {
    EWMA: {"lambda": ("lam", 0.01, 1.0), "width": ("width", 0.1, 10.0)},
    CUSUM: {"k": ("k", 0.0, 5.0), "h": ("h", 0.1, 50.0), "headstart": ("headstart", 0.0, 50.0)},
}


def is_detector(rule_id: str) -> bool:
    """Whether `rule_id` names a detector (`ewma`, `cusum`) rather than a run rule."""
    return rule_id in DETECTORS


def parse_rule_list(text: str | list[str] | tuple[str, ...]) -> list[str]:
    """Expand ids and set names (comma-separated or a list) into rule ids, in order, no repeats."""
    items = text.split(",") if isinstance(text, str) else list(text)
    out: list[str] = []
    for raw in items:
        name = raw.strip().lower()
        if not name:
            continue
        if name in RULE_SETS:
            ids = RULE_SETS[name]
        elif name in RULES or name in DETECTORS:
            ids = (name,)
        else:
            known = ", ".join([*RULE_SETS, *RULES, *DETECTORS])
            raise RuleListError(f"unknown rule or set {raw.strip()!r} (known: {known})")
        out.extend(i for i in ids if i not in out)
    if not out:
        raise RuleListError("no rules selected")
    return out


def resolve_rules(ids: list[str], lengths: dict[str, int] | None = None) -> list[RuleSpec]:
    """RuleSpecs for the run rules among `ids`, with run lengths (or window m) overridden from
    `lengths`. Detector ids are left to `resolve_detectors`."""
    lengths = lengths or {}
    specs: list[RuleSpec] = []
    for rule_id in ids:
        if rule_id in DETECTORS:
            if rule_id in lengths:
                raise RuleListError(f"{rule_id} has no length to adjust")
            continue
        spec = RULES[rule_id]
        if rule_id in lengths:
            new = int(lengths[rule_id])
            if spec.kind == BEYOND:
                raise RuleListError(f"{rule_id} has no length to adjust")
            minimum = max(spec.k, 2) if spec.kind == K_OF_M else 2
            if spec.kind == ALTERNATE or spec.kind == TREND:
                minimum = 3
            if new < minimum or new > 100:
                raise RuleListError(f"length of {rule_id} must be between {minimum} and 100")
            spec = replace(spec, length=new)
        specs.append(spec)
    return specs


def resolve_detectors(
    ids: list[str] | tuple[str, ...],
    options: Mapping[str, Mapping[str, float]] | None = None,
) -> list[DetectorSpec]:
    """Specs of the detectors among `ids` (in order), with parameters from `options`
    (detector id -> option name -> value, e.g. {"ewma": {"lambda": 0.1}}). Run rule ids are left
    to `resolve_rules`. A bad option names the detector, the option and the allowed range."""
    options = options or {}
    for det_id in options:
        if det_id not in DETECTORS:
            raise RuleListError(f"{det_id!r} is not a detector (known: {', '.join(DETECTORS)})")
    out: list[DetectorSpec] = []
    for det_id in ids:
        if det_id not in DETECTORS:
            continue
        spec = DETECTORS[det_id]
        allowed = DETECTOR_OPTIONS[det_id]
        changes: dict[str, float] = {}
        for name, raw in options.get(det_id, {}).items():
            if name not in allowed:
                raise RuleListError(
                    f"{det_id} has no option {name!r} (known: {', '.join(allowed)})")
            field, lo, hi = allowed[name]
            if isinstance(raw, bool) or not isinstance(raw, int | float):
                raise RuleListError(f"{det_id} {name} must be a number, got {raw!r}")
            value = float(raw)
            if not lo <= value <= hi:
                raise RuleListError(f"{det_id} {name} must be between {lo:g} and {hi:g}")
            changes[field] = value
        if isinstance(spec, EwmaSpec):
            spec = EwmaSpec(changes.get("lam", spec.lam), changes.get("width", spec.width))
        else:
            spec = CusumSpec(changes.get("k", spec.k), changes.get("h", spec.h),
                             changes.get("headstart", spec.headstart))
        if isinstance(spec, CusumSpec) and spec.headstart >= spec.h:
            raise RuleListError("cusum headstart must be below h (h/2 is the usual choice)")
        out.append(spec)
    return out
