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
"""

from __future__ import annotations

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
        elif name in RULES:
            ids = (name,)
        else:
            known = ", ".join([*RULE_SETS, *RULES])
            raise RuleListError(f"unknown rule or set {raw.strip()!r} (known: {known})")
        out.extend(i for i in ids if i not in out)
    if not out:
        raise RuleListError("no rules selected")
    return out


def resolve_rules(ids: list[str], lengths: dict[str, int] | None = None) -> list[RuleSpec]:
    """RuleSpecs for `ids`, with run lengths (or window m) overridden from `lengths`."""
    lengths = lengths or {}
    specs: list[RuleSpec] = []
    for rule_id in ids:
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
