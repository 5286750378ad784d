"""Build the detection-power table of a characteristic's rule set from the engine's ARLs
(`engine.budget.power`); `present.power_view` lays it out."""

from __future__ import annotations

import math
from collections.abc import Sequence

from linewatch.engine.budget.power import SHIFTS, plotted_shift
from linewatch.engine.rulebook import (
    DETECTOR_OPTIONS,
    DETECTORS,
    RULE_SETS,
    DetectorSpec,
    RuleSpec,
)
from linewatch.engine.setup import ChartSetup
from linewatch.present.power_cache import cached_power
from linewatch.present.power_view import PowerRow, PowerTable


def power_table(rule_set: str, rules: Sequence[RuleSpec], detectors: Sequence[DetectorSpec],
                subgroup_size: int = 1, shifts: Sequence[float] = SHIFTS) -> PowerTable:
    """The ARLs of `rules` with `detectors` at `shifts` of the plotted statistic and, with
    subgroups, at the same shifts of the individual values (δ·√n of the means' σ)."""
    rows: list[PowerRow] = []
    worst = 0.0
    units = [("points", list(shifts))]
    if subgroup_size > 1:
        units.append(("values", [plotted_shift(s, subgroup_size) for s in shifts]))
    for unit, plotted in units:
        found = cached_power(rules, detectors, plotted)
        for r in found:
            if r.std_error is not None and math.isfinite(r.arl) and r.arl > 0:
                worst = max(worst, r.std_error / r.arl)
        rows.append(PowerRow(unit, tuple(float(s) for s in shifts),
                             tuple(r.arl for r in found),
                             tuple(r.std_error is not None for r in found)))
    return PowerTable(rule_set, tuple(rows), subgroup_size, worst)


def arl_by_shift(table: PowerTable, unit: str = "points") -> dict[str, float | None]:
    """{"0": ARL₀, "0.5": ..., "3": ...} for JSON (None where no rule can fire)."""
    row = next(r for r in table.rows if r.unit == unit)
    return {f"{s:g}": (a if math.isfinite(a) else None)
            for s, a in zip(row.shifts, row.run_lengths, strict=True)}


def rule_set_name(setup: ChartSetup) -> str:
    """The rules and detectors of a setup as a user would type them: a whole named set by its
    name, a detector with parameters other than the defaults with them (cusum h=4)."""
    ids = [r.id for r in setup.rules]
    words: list[str] = []
    for name, members in RULE_SETS.items():
        if all(m in ids for m in members):
            words.append(name)
            ids = [i for i in ids if i not in members]
    words.extend(ids)
    for det in setup.detectors:
        base = DETECTORS[det.id]
        changed = [f"{option}={getattr(det, field):g}"
                   for option, (field, _lo, _hi) in DETECTOR_OPTIONS[det.id].items()
                   if getattr(det, field) != getattr(base, field)]
        words.append(det.id + (f" ({' '.join(changed)})" if changed else ""))
    return ",".join(words) if words else "no rules"
