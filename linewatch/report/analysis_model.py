"""What the analysis page of `check` shows, and the figures both its forms (HTML, Markdown)
take from it: traces with per-point limits, phase separators, rule letters and their legend,
box figures per phase, the regression curve and band, and the detection-power line."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from linewatch.engine.batch import HistoryResult
from linewatch.engine.limits import ChartLimits, LimitSet
from linewatch.engine.phases import PhasedHistory
from linewatch.engine.rulebook import RuleSpec
from linewatch.engine.setting_regression import SettingRegression
from linewatch.present.marks import PATTERN_MARKS, mark_of_kinds
from linewatch.report.build import ChartTrace


@dataclass(slots=True)
class CharacteristicAnalysis:
    """One characteristic as `check` found it."""

    name: str
    unit: str
    lsl: float | None
    usl: float | None
    target: float | None
    subgroup_size: int
    rules: tuple[RuleSpec, ...]
    values: np.ndarray
    result: HistoryResult
    summary: dict[str, Any]
    phased: PhasedHistory | None = None
    regression: SettingRegression | None = None
    rule_set: str = ""  # the rules as given ("western-electric")


@dataclass(slots=True)
class AnalysisPage:
    """The whole page."""

    logs: list[str]
    made_at: float
    characteristics: list[CharacteristicAnalysis]
    not_charted: list[tuple[str, int, str]] = field(default_factory=list)
    rejected: list[tuple[str, int, str]] = field(default_factory=list)  # file, line, reason


def _segments(c: CharacteristicAnalysis, location: bool
              ) -> list[tuple[list[int], LimitSet | None]]:
    """Per phase (one segment without phases): the plotted indices of the chart's points and
    the limits they were judged against. A moving range takes the index of the later of its
    two points and never spans two phases."""
    mr = not location and c.subgroup_size == 1
    if c.phased is None:
        count = c.result.location.shape[0] if location else c.result.dispersion.shape[0]
        first = 1 if mr else 0
        return [(list(range(first, first + count)), c.result.limits)]
    out = []
    for p in c.phased.phases:
        first = p.first_point + (1 if mr else 0)
        count = max(p.points - 1, 0) if mr else p.points
        out.append((list(range(first, first + count)), p.limits))
    return out


def trace_of(c: CharacteristicAnalysis, location: bool = True) -> ChartTrace:
    """The chart's points with their limits per point and the signalling points flagged."""
    values = c.result.location if location else c.result.dispersion
    which = 0 if location else 1
    t = c.result.table
    flagged = {int(i) for i, k in zip(t.index.tolist(), t.chart.tolist(), strict=True)
               if k == which}
    indices: list[int] = []
    lims: list[ChartLimits | None] = []
    for idx, limit_set in _segments(c, location):
        indices += idx
        lim = None if limit_set is None else (
            limit_set.location if location else limit_set.dispersion)
        lims += [lim] * len(idx)
    n = min(len(indices), len(values))
    chart = c.result.limits.location.chart if location else c.result.limits.dispersion.chart
    return ChartTrace(
        chart=chart,
        indices=indices[:n],
        values=[float(v) for v in values[:n]],
        center=[None if m is None else m.center for m in lims[:n]],
        ucl=[None if m is None else m.ucl for m in lims[:n]],
        lcl=[None if m is None else m.lcl for m in lims[:n]],
        flagged=flagged,
    )


def marks_of(c: CharacteristicAnalysis, location: bool = True) -> dict[int, str]:
    """Plotted index -> the letter of the most urgent kind of rule that fired there."""
    kinds = {r.id: r.kind for r in c.rules}
    t = c.result.table
    which = 0 if location else 1
    at: dict[int, list[str | None]] = {}
    for i, k, r in zip(t.index.tolist(), t.chart.tolist(), t.rule.tolist(), strict=True):
        if k == which:
            at.setdefault(int(i), []).append(kinds.get(t.rules[r]))
    return {i: mark_of_kinds(ks) for i, ks in at.items()}


def legend_of(c: CharacteristicAnalysis) -> list[tuple[str, str, list[str]]]:
    """(letter, what it means, the rules that fired under it with their words), for the
    letters that appear on this characteristic's charts."""
    fired = {c.result.table.rules[r] for r in set(c.result.table.rule.tolist())}
    out = []
    for kind, (letter, words) in PATTERN_MARKS.items():
        rules = [f"{r.id}: {r.describe()}" for r in c.rules if r.kind == kind and r.id in fired]
        if rules:
            out.append((letter, words, rules))
    return out


def separators_of(c: CharacteristicAnalysis, location: bool = True) -> list[tuple[int, str]]:
    """(position in the trace, label) where each phase starts."""
    if c.phased is None:
        return []
    out, pos = [], 0
    for (idx, _), p in zip(_segments(c, location), c.phased.phases, strict=True):
        out.append((pos, f"{p.number}: {p.label}"))
        pos += len(idx)
    return out


def boxes_of(c: CharacteristicAnalysis
             ) -> list[tuple[str, float, float, float, float, float, list[float]]]:
    """Box figures per phase (or of the whole log when there are no phases)."""
    from linewatch.engine.summary import describe

    if c.phased is None:
        ds = [("whole log", describe(c.values))]
    else:
        ds = [(f"{p.number}: {p.label}", p.description) for p in c.phased.phases]
    out = []
    for label, d in ds:
        if None in (d.whisker_low, d.q1, d.median, d.q3, d.whisker_high):
            continue
        out.append((label, float(d.whisker_low), float(d.q1), float(d.median),  # type: ignore[arg-type]
                    float(d.q3), float(d.whisker_high),  # type: ignore[arg-type]
                    [v for _, v in d.outliers]))
    return out


def curve_of(r: SettingRegression, steps: int = 60
             ) -> tuple[list[float], list[float], list[float], list[float]]:
    """The fitted curve and its 95% confidence band over the settings tried."""
    if r.fit is None:
        return [], [], [], []
    lo, hi = r.fit.x_range
    xs = np.linspace(lo, hi, steps)
    fitted, band_lo, band_hi = r.fit.band(xs)
    return xs.tolist(), fitted.tolist(), band_lo.tolist(), band_hi.tolist()


def power_line(c: CharacteristicAnalysis) -> str:
    """The average run length of the chosen rules at mean shifts of the plotted statistic."""
    from linewatch.engine.budget.power import detection_power

    if not c.rules:
        return "No rules chosen: nothing can signal."
    runs = detection_power(list(c.rules))
    parts = []
    for r in runs:
        approx = "≈" if r.method.startswith("simulation") else ""
        parts.append(f"{r.shift:g}σ: {approx}{r.arl:.1f}")
    what = "subgroup mean" if c.subgroup_size > 1 else "reading"
    return ("Detection power of the chosen rules (average points to a signal when the mean "
            f"of the {what} is shifted by): " + ", ".join(parts) + " points.")
