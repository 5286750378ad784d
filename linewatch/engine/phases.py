"""A finished series split into phases (a lot, a die, a set point: each change of a label, or
given plotted points), each charted with its own Phase I limits or with the first phase's, and
described: N, mean, SD, t-interval, quartiles and outliers, capability, signals.

`analyse_phases` also stitches the phases' charts into one `HistoryResult` over the whole
series (plotted indices and rows counted from the start of the series), so whatever reads a
history result (signal listings, the exit code) reads the phased one alike. Subgroups restart
at each phase: a subgroup never mixes two lots. No I/O.
"""

from __future__ import annotations

import dataclasses
import itertools
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from linewatch.domain.errors import BadLimits, NotEnoughData
from linewatch.engine.batch import FiringTable, HistoryResult, analyse_history
from linewatch.engine.charts import plotted_series
from linewatch.engine.limits import LimitSet
from linewatch.engine.phase_compare import DEFAULT_PRACTICAL_SHARE, Comparison, compare
from linewatch.engine.setup import ChartSetup
from linewatch.engine.summary import Capability, Description, capability, describe

LimitsMode = Literal["per-phase", "first"]


@dataclass(slots=True)
class Phase:
    """One phase of the series: values [start, stop) and what was found in them."""

    number: int  # 1, 2, ...
    label: str  # the column's value, or "from point N"
    start: int
    stop: int
    first_point: int  # plotted index (over the whole series) of its first point
    points: int  # plotted points
    limits: LimitSet | None  # what its points were judged against
    own_sigma: float | None  # σ̂ within of this phase's own values (capability, σ units)
    description: Description
    capability: Capability
    signals: int
    signals_by_rule: dict[str, int] = field(default_factory=dict)
    problem: str = ""  # why it has no limits of its own ("" when it has)
    carried: bool = False  # judged against the first phase's limits


@dataclass(slots=True)
class PhasedHistory:
    """Every phase, their comparisons, and the stitched chart over the whole series."""

    phases: list[Phase]
    comparisons: list[Comparison]
    result: HistoryResult
    # per plotted point: the limits it was judged against (None where its phase has none)
    point_limits: list[LimitSet | None]
    mode: LimitsMode


def starts_from_labels(labels: Sequence[object]) -> list[int]:
    """Positions where a new phase starts: 0 and every change of label."""
    out = [0] if len(labels) else []
    out += [k for k in range(1, len(labels)) if labels[k] != labels[k - 1]]
    return out


def starts_from_points(points: Sequence[int], subgroup_size: int, values: int) -> list[int]:
    """Value positions of phases starting at the given plotted points (0 always starts one);
    points at or beyond the end are left out."""
    out = {0}
    for p in points:
        pos = int(p) * subgroup_size
        if 0 < pos < values:
            out.add(pos)
    return sorted(out)


def _own(values: np.ndarray, setup: ChartSetup) -> tuple[HistoryResult | None, str]:
    try:
        return analyse_history(values, setup), ""
    except (NotEnoughData, BadLimits) as exc:
        return None, str(exc)


def analyse_phases(
    values: np.ndarray,
    setup: ChartSetup,
    starts: Sequence[int],
    labels: Sequence[str],
    *,
    mode: LimitsMode = "per-phase",
    lsl: float | None = None,
    usl: float | None = None,
    practical_share: float = DEFAULT_PRACTICAL_SHARE,
) -> PhasedHistory:
    """Chart and describe each phase; raise NotEnoughData when no phase can have limits (or,
    with `mode="first"`, when the first cannot)."""
    x = np.asarray(values, dtype=float)
    bounds = [*starts, x.shape[0]]
    n = setup.subgroup_size
    phases: list[Phase] = []
    results: list[HistoryResult | None] = []
    carried_setup: ChartSetup | None = None
    point = 0
    for k in range(len(starts)):
        lo, hi = bounds[k], bounds[k + 1]
        part = x[lo:hi]
        own, problem = _own(part, setup)
        chart = own
        carried = False
        if mode == "first" and k == 0 and own is None:
            raise NotEnoughData(f"the first phase has no limits to carry over: {problem}")
        if mode == "first" and k == 0 and own is not None and setup.center is None:
            lim = own.limits
            carried_setup = dataclasses.replace(
                setup, center=lim.location.center, sigma=lim.sigma_within, baseline=None)
        if mode == "first" and k > 0 and carried_setup is not None:
            chart, carried = analyse_history(part, carried_setup), True
        results.append(chart)
        pts = chart.location.shape[0] if chart else plotted_series(part, n, setup.dispersion)[
            0].values.shape[0]
        own_sigma = own.limits.sigma_within if own else None
        by_rule: dict[str, int] = {}
        if chart is not None:
            t = chart.table
            for r in t.rule.tolist():
                by_rule[t.rules[r]] = by_rule.get(t.rules[r], 0) + 1
        phases.append(Phase(
            k + 1, labels[k], lo, hi, point, pts, chart.limits if chart else None, own_sigma,
            describe(part), capability(part, own_sigma, lsl, usl),
            len(chart.table) if chart else 0, by_rule, "" if own else problem, carried))
        point += pts
    if all(r is None for r in results):
        raise NotEnoughData("; ".join(f"phase {p.number}: {p.problem}" for p in phases))
    comparisons = [
        compare(x[a.start:a.stop], x[b.start:b.stop], a=f"phase {a.number} ({a.label})",
                b=f"phase {b.number} ({b.label})", lsl=lsl, usl=usl, sigma=a.own_sigma,
                practical_share=practical_share)
        for a, b in itertools.pairwise(phases)
    ]
    if len(phases) > 2:
        a, b = phases[0], phases[-1]
        comparisons.append(compare(
            x[a.start:a.stop], x[b.start:b.stop], a=f"phase {a.number} ({a.label})",
            b=f"phase {b.number} ({b.label})", lsl=lsl, usl=usl, sigma=a.own_sigma,
            practical_share=practical_share))
    result, point_limits = _stitch(phases, results, x, setup)
    return PhasedHistory(phases, comparisons, result, point_limits, mode)


def _stitch(phases: list[Phase], results: list[HistoryResult | None], x: np.ndarray,
            setup: ChartSetup) -> tuple[HistoryResult, list[LimitSet | None]]:
    """One history over the whole series: the phases' points and firings, indices and rows
    counted from the start; the limits are the first charted phase's."""
    locs, disps, idx, chart, rule, row, value, side = [], [], [], [], [], [], [], []
    point_limits: list[LimitSet | None] = []
    leftover = 0
    first = next(r for r in results if r is not None)
    template = first.table
    for p, r in zip(phases, results, strict=True):
        if r is None:
            loc, disp = plotted_series(x[p.start:p.stop], setup.subgroup_size, setup.dispersion)
            locs.append(loc.values)
            disps.append(disp.values)
            point_limits += [None] * p.points
            continue
        locs.append(r.location)
        disps.append(r.dispersion)
        point_limits += [r.limits] * p.points
        leftover += r.leftover
        t = r.table
        idx.append(t.index + p.first_point)
        chart.append(t.chart)
        rule.append(t.rule)
        row.append(t.row + p.start)
        value.append(t.value)
        side.append(t.side if t.side is not None else np.zeros(len(t), dtype=np.int8))
    table = FiringTable(
        np.concatenate(idx), np.concatenate(chart), np.concatenate(rule), np.concatenate(row),
        np.concatenate(value), template.charts, template.rules,
        np.concatenate(side) if template.side is not None else None)
    return (HistoryResult(first.limits, np.concatenate(locs), np.concatenate(disps), table,
                          leftover), point_limits)
