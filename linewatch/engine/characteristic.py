"""One characteristic from raw values to limits and signals: batch (history) and live.

`analyse_history` is the vectorised path used by `check`; `CharacteristicEngine` is the live path
used by `watch`, fed values in any chunking. Given the same values and the same baseline, both
produce the same limits and the same signals (a property test holds them to it).
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from linewatch.domain.errors import BadLimits, NotEnoughData
from linewatch.engine.charts import chart_names, plotted_series, subgroup_stats
from linewatch.engine.limits import (
    MIN_BASELINE,
    ChartLimits,
    LimitSet,
    estimate_limits,
    given_limits,
)
from linewatch.engine.rulebook import BEYOND, RuleSpec
from linewatch.engine.rules import classify, evaluate_classified
from linewatch.engine.stream import ChartLimitsState, ChartRules, lookback

VECTOR_MIN = 32  # judge this many new points or more in one vectorised pass
HISTORY_KEEP = 2000  # plotted points kept in memory per chart (a new baseline reaches back)
STATE_HISTORY = 500  # of those, how many are saved with the engine state


def _fire_chunk(
    values: np.ndarray, rules: ChartRules, fed: deque[float]
) -> dict[int, list[str]]:
    """Rule ids firing at each position of `values` (new points of one chart, in order), judged
    with numpy over the fed tail plus the new points; the counters are then brought up to date
    by replaying the new tail."""
    if values.shape[0] == 0:
        return {}
    tail = np.fromiter(fed, dtype=float, count=len(fed))
    x = np.concatenate((tail, values))
    lim = rules.limits
    side, level = classify(x, lim.center, lim.sigma, lim.ucl, lim.lcl)
    hits: dict[int, list[str]] = {}
    start = tail.shape[0]
    for spec in rules.specs:
        for k in np.flatnonzero(evaluate_classified(spec, x, side, level)[start:]).tolist():
            hits.setdefault(k, []).append(spec.id)
    fed.extend(values[-fed.maxlen :].tolist() if fed.maxlen else values.tolist())
    rules.replay(list(fed))
    return hits


def _judge_vectorised(
    points: list[PlottedPoint], rules: ChartRules, fed: deque[float]
) -> None:
    """Set the rules that fire at each of `points` in one numpy pass (see `_fire_chunk`)."""
    hits = _fire_chunk(np.array([p.value for p in points], dtype=float), rules, fed)
    for k, point in enumerate(points):
        point.rules = hits.get(k, [])


def _limits_to_dict(lim: LimitSet) -> dict[str, Any]:
    def chart(c: ChartLimits) -> list[Any]:
        return [c.chart, c.center, c.ucl, c.lcl, c.sigma]

    return {"location": chart(lim.location), "dispersion": chart(lim.dispersion),
            "sigma_within": lim.sigma_within, "source": lim.source}


def _limits_from_dict(d: dict[str, Any]) -> LimitSet:
    return LimitSet(ChartLimits(*d["location"]), ChartLimits(*d["dispersion"]),
                    d["sigma_within"], d["source"])


def _point_to_list(p: PlottedPoint | None) -> list[Any] | None:
    if p is None:
        return None
    return [p.index, p.value, p.row, p.phase, p.judged, p.rules, p.meta]


def _point_from_list(chart: str, a: list[Any]) -> PlottedPoint:
    """A point saved by `_point_to_list` (callers skip the None of a missing dispersion point)."""
    return PlottedPoint(chart, a[0], a[1], a[2], a[3], a[4], list(a[5]), a[6])


@dataclass(frozen=True, slots=True)
class ChartSetup:
    """How one characteristic is charted."""

    name: str
    subgroup_size: int = 1
    dispersion: str = "range"
    rules: tuple[RuleSpec, ...] = ()
    baseline: int | None = None  # plotted points; None: all points (batch only)
    center: float | None = None
    sigma: float | None = None

    @property
    def charts(self) -> tuple[str, str]:
        return chart_names(self.subgroup_size, self.dispersion)

    @property
    def dispersion_rules(self) -> tuple[RuleSpec, ...]:
        """Dispersion charts get only the beyond-limits test of the selected sets."""
        return tuple(r for r in self.rules if r.kind == BEYOND)


@dataclass(frozen=True, slots=True)
class Firing:
    """A rule fired at a plotted point (row position is into the values fed so far)."""

    chart: str
    rule: str
    index: int
    row: int
    value: float
    meta: object = None  # what the caller attached to the row (live path: file, line, time)


@dataclass(frozen=True, slots=True)
class FiringTable:
    """Firings of a whole history as parallel arrays, ordered by point, chart, then rule."""

    index: np.ndarray
    chart: np.ndarray  # position in `charts`
    rule: np.ndarray  # position in `rules`
    row: np.ndarray
    value: np.ndarray
    charts: tuple[str, ...]
    rules: tuple[str, ...]

    def __len__(self) -> int:
        return int(self.index.shape[0])


@dataclass(slots=True)
class HistoryResult:
    """What `analyse_history` found."""

    limits: LimitSet
    location: np.ndarray
    dispersion: np.ndarray
    table: FiringTable
    leftover: int  # values of a trailing incomplete subgroup, left out

    @property
    def firings(self) -> list[Firing]:
        """The firings as records (the table is the fast form for large histories)."""
        t = self.table
        return [
            Firing(t.charts[c], t.rules[r], i, w, v)
            for i, c, r, w, v in zip(t.index.tolist(), t.chart.tolist(), t.rule.tolist(),
                                     t.row.tolist(), t.value.tolist(), strict=True)
        ]


def _limit_state(lim: ChartLimits) -> ChartLimitsState:
    if lim.asymmetric:
        return ChartLimitsState(lim.center, lim.sigma, lim.ucl, lim.lcl)
    return ChartLimitsState(lim.center, lim.sigma)


def _evaluate_series(
    values: np.ndarray, lim: ChartLimits, specs: Iterable[RuleSpec]
) -> dict[str, np.ndarray]:
    st = _limit_state(lim)
    x = np.asarray(values, dtype=float)
    side, level = classify(x, st.center, st.sigma, st.ucl, st.lcl)  # once for every rule
    return {s.id: evaluate_classified(s, x, side, level) for s in specs}


def analyse_history(values: np.ndarray, setup: ChartSetup) -> HistoryResult:
    """Limits and rule firings over a whole series of individual values (vectorised)."""
    x = np.asarray(values, dtype=float)
    n = setup.subgroup_size
    loc, disp = plotted_series(x, n, setup.dispersion)
    leftover = x.shape[0] - (x.shape[0] // n) * n if n > 1 else 0
    if setup.sigma is not None and setup.center is not None:
        limits = given_limits(setup.center, setup.sigma, n, setup.dispersion)
    else:
        b = loc.values.shape[0] if setup.baseline is None else setup.baseline
        if loc.values.shape[0] < max(b, MIN_BASELINE):
            need = max(b, MIN_BASELINE) * n
            raise NotEnoughData(
                f"too few points for limits on {setup.name}: {x.shape[0] - leftover} values, "
                f"{need} needed"
            )
        disp_base = disp.values[: b - 1] if n == 1 else disp.values[:b]
        limits = estimate_limits(loc.values[:b], disp_base, n, setup.dispersion)
    rule_ids = tuple(r.id for r in setup.rules)
    parts: list[tuple[np.ndarray, int, int, np.ndarray, np.ndarray]] = []
    for c, (series, lim, specs) in enumerate((
        (loc, limits.location, setup.rules),
        (disp, limits.dispersion, setup.dispersion_rules),
    )):
        for rule_id, fired in _evaluate_series(series.values, lim, specs).items():
            pos = np.flatnonzero(fired)
            parts.append((series.indices[pos], c, rule_ids.index(rule_id), series.rows[pos],
                          series.values[pos]))
    if parts:
        index = np.concatenate([p[0] for p in parts])
        chart = np.concatenate([np.full(p[0].shape[0], p[1], dtype=np.int8) for p in parts])
        rule = np.concatenate([np.full(p[0].shape[0], p[2], dtype=np.int16) for p in parts])
        row = np.concatenate([p[3] for p in parts])
        value = np.concatenate([p[4] for p in parts])
        order = np.lexsort((rule, chart, index))
        table = FiringTable(index[order], chart[order], rule[order], row[order], value[order],
                            setup.charts, rule_ids)
    else:
        empty = np.zeros(0, dtype=np.int64)
        table = FiringTable(empty, empty, empty, empty, np.zeros(0), setup.charts, rule_ids)
    return HistoryResult(limits, loc.values, disp.values, table, leftover)


@dataclass(slots=True)
class PlottedPoint:
    """A live plotted point with the rules that fired at it (empty until judged)."""

    chart: str
    index: int
    value: float
    row: int
    phase: int
    judged: bool = False
    rules: list[str] = field(default_factory=list)
    meta: object = None


@dataclass(slots=True)
class LiveOutput:
    """What one `push` produced."""

    points: list[PlottedPoint] = field(default_factory=list)
    firings: list[Firing] = field(default_factory=list)
    limits: LimitSet | None = None  # set when new limits took effect in this push
    judged: dict[str, tuple[int, int]] = field(default_factory=dict)  # chart -> index range
    problem: str | None = None  # limits could not be formed (said once, when first met)


class CharacteristicEngine:
    """Live charting of one characteristic: feed values in order, in any chunking."""

    def __init__(self, setup: ChartSetup) -> None:
        if setup.baseline is None and setup.sigma is None:
            raise ValueError("a live engine needs a baseline length or known limits")
        self.setup = setup
        self.loc_chart, self.disp_chart = setup.charts
        self.values_seen = 0
        self.pending: list[float] = []
        self.prev_value: float | None = None
        self.phase = 0
        self.phase_start = 0
        self.limits: LimitSet | None = None
        self.next_index = 0
        self.loc_history: deque[PlottedPoint] = deque(maxlen=HISTORY_KEEP)
        self.disp_history: deque[PlottedPoint] = deque(maxlen=HISTORY_KEEP)
        self.waiting: list[tuple[PlottedPoint, PlottedPoint | None]] = []
        self.phase_baseline = setup.baseline or 0
        self.problem: str | None = None  # why limits could not be formed, once reported
        self.loc_rules: ChartRules | None = None
        self.disp_rules: ChartRules | None = None
        # values pushed into the current rule states, enough to rebuild them after a restart
        self.loc_fed: deque[float] = deque(maxlen=lookback(setup.rules))
        self.disp_fed: deque[float] = deque(maxlen=lookback(setup.dispersion_rules))
        if setup.sigma is not None and setup.center is not None:
            self._apply_limits(
                given_limits(setup.center, setup.sigma, setup.subgroup_size, setup.dispersion)
            )

    # -- limits -------------------------------------------------------------------------------
    def _apply_limits(self, limits: LimitSet) -> None:
        self.limits = limits
        self.loc_rules = ChartRules(self.setup.rules, _limit_state(limits.location))
        self.disp_rules = ChartRules(self.setup.dispersion_rules, _limit_state(limits.dispersion))
        self.loc_fed.clear()
        self.disp_fed.clear()

    @property
    def baseline_needed(self) -> int:
        """Plotted points still needed before this phase has limits (0 once it has them)."""
        if self.limits is not None:
            return 0
        return max(0, max(self.phase_baseline, MIN_BASELINE) - len(self.waiting))

    def _try_estimate(self, out: LiveOutput) -> LimitSet | None:
        need = max(self.phase_baseline, MIN_BASELINE)
        if len(self.waiting) < need:
            return None
        base = self.waiting[:need]
        loc = np.array([p.value for p, _ in base])
        if self.setup.subgroup_size == 1:
            disp = np.array([d.value for _, d in base[1:] if d is not None])
        else:
            disp = np.array([d.value for _, d in base if d is not None])
        try:
            return estimate_limits(loc, disp, self.setup.subgroup_size, self.setup.dispersion)
        except (BadLimits, NotEnoughData) as exc:
            # refused for this phase: not finite (values too extreme), or σ̂ = 0 (every
            # baseline value alike). The baseline is these points whatever comes after, so
            # more points cannot help (a new baseline or known limits can): said once, kept
            # in `problem`, and the other characteristics go on
            if self.problem is None:
                self.problem = out.problem = str(exc)
            return None

    # -- feeding ------------------------------------------------------------------------------
    def push(
        self, values: Sequence[float] | np.ndarray, meta: Sequence[object] | None = None
    ) -> LiveOutput:
        """Feed the next values (in order); returns new points, firings and new limits.

        `meta`, when given, holds one JSON-ready item per value (e.g. file, line, time); it is
        carried on the plotted point (a subgroup's from its last row) and on its firings."""
        out = LiveOutput()
        if (self.limits is not None and not self.waiting
                and len(values) >= VECTOR_MIN * self.setup.subgroup_size):
            self._push_judged_chunk(values, meta, out)
            return out
        queue: list[tuple[PlottedPoint, PlottedPoint | None]] = []
        n = self.setup.subgroup_size
        for k, v in enumerate(values):
            x = float(v)
            tag = meta[k] if meta is not None else None
            row = self.values_seen
            self.values_seen += 1
            if n == 1:
                loc = PlottedPoint(self.loc_chart, self.next_index, x, row, self.phase, meta=tag)
                disp = None
                if self.prev_value is not None:
                    disp = PlottedPoint(self.disp_chart, self.next_index, abs(x - self.prev_value),
                                        row, self.phase, meta=tag)
                self.prev_value = x
            else:
                self.pending.append(x)
                if len(self.pending) < n:
                    continue
                mean, spread = subgroup_stats(self.pending, self.setup.dispersion)
                loc = PlottedPoint(self.loc_chart, self.next_index, mean, row, self.phase,
                                   meta=tag)
                disp = PlottedPoint(self.disp_chart, self.next_index, spread, row, self.phase,
                                    meta=tag)
                self.pending = []
            self.next_index += 1
            self._plot(loc, disp, out, queue)
            rest = len(values) - k - 1
            if self.limits is not None and not self.waiting and rest >= VECTOR_MIN * n:
                # limits formed inside this chunk: the rest goes the vectorised way
                self._judge_all(queue, out)
                queue = []
                self._push_judged_chunk(values[k + 1 :],
                                        None if meta is None else meta[k + 1 :], out)
                break
        self._judge_all(queue, out)
        return out

    def _push_judged_chunk(
        self, values: Sequence[float] | np.ndarray, meta: Sequence[object] | None,
        out: LiveOutput,
    ) -> None:
        """A large chunk in a phase that has limits: plotted statistics, rule firings and the
        kept history all computed with numpy, the same as feeding the values one by one."""
        n = self.setup.subgroup_size
        x = np.asarray(values, dtype=float)
        first_row = self.values_seen
        self.values_seen += x.shape[0]
        if n == 1:
            loc_vals = x
            rows = first_row + np.arange(x.shape[0])
            prev = self.prev_value
            disp_vals = np.abs(np.diff(x, prepend=x[0] if prev is None else prev))
            disp_from = 1 if prev is None else 0
            self.prev_value = float(x[-1])
            tags = range(x.shape[0])
        else:
            joined = np.concatenate((np.asarray(self.pending, dtype=float), x))
            groups = joined.shape[0] // n
            loc_s, disp_s = plotted_series(joined[: groups * n], n, self.setup.dispersion)
            loc_vals, disp_vals, disp_from = loc_s.values, disp_s.values, 0
            last = np.arange(groups) * n + (n - 1) - len(self.pending)  # position in this chunk
            rows = first_row + last
            tags = last.tolist()
            left = joined[groups * n :]
            self.pending = left.tolist()
        count = loc_vals.shape[0]
        if count == 0:
            return
        start = self.next_index
        self.next_index += count
        assert self.loc_rules is not None and self.disp_rules is not None
        loc_hits = _fire_chunk(loc_vals, self.loc_rules, self.loc_fed)
        disp_hits = _fire_chunk(disp_vals[disp_from:], self.disp_rules, self.disp_fed)
        tag_of = (lambda k: None) if meta is None else (lambda k: meta[tags[k]])
        keep_from = max(0, count - HISTORY_KEEP)
        for k in range(keep_from, count):
            idx = start + k
            self.loc_history.append(PlottedPoint(self.loc_chart, idx, float(loc_vals[k]),
                                                 int(rows[k]), self.phase, True,
                                                 loc_hits.get(k, [])))
            if k >= disp_from:
                self.disp_history.append(PlottedPoint(
                    self.disp_chart, idx, float(disp_vals[k]), int(rows[k]), self.phase, True,
                    disp_hits.get(k - disp_from, [])))
        for chart, lo in ((self.loc_chart, start), (self.disp_chart, start + disp_from)):
            if lo <= start + count - 1:
                earlier, _ = out.judged.get(chart, (lo, lo))
                out.judged[chart] = (min(earlier, lo), start + count - 1)
        for k in sorted(set(loc_hits) | {j + disp_from for j in disp_hits}):
            for chart, hits, pos, vals in ((self.loc_chart, loc_hits, k, loc_vals),
                                           (self.disp_chart, disp_hits, k - disp_from,
                                            disp_vals)):
                for rule_id in hits.get(pos, []):
                    out.firings.append(Firing(chart, rule_id, start + k, int(rows[k]),
                                              float(vals[k]), tag_of(k)))

    def _plot(self, loc: PlottedPoint, disp: PlottedPoint | None, out: LiveOutput,
              queue: list[tuple[PlottedPoint, PlottedPoint | None]]) -> None:
        """Keep a new point; queue it for judging once this phase has limits."""
        self.loc_history.append(loc)
        out.points.append(loc)
        if disp is not None:
            self.disp_history.append(disp)
            out.points.append(disp)
        if self.limits is None:
            self.waiting.append((loc, disp))
            limits = self._try_estimate(out)
            if limits is None:
                return
            self._apply_limits(limits)
            out.limits = limits
            queue.extend(self.waiting)
            self.waiting = []
            return
        queue.append((loc, disp))

    def _judge_all(self, queue: list[tuple[PlottedPoint, PlottedPoint | None]],
                   out: LiveOutput) -> None:
        """Judge queued points in order: point by point for a few, in one vectorised pass over
        the recent tail plus the new points for many (both give the same firings, since every
        rule looks back at most `lookback` points)."""
        if not queue:
            return
        assert self.loc_rules is not None and self.disp_rules is not None
        # points a new baseline reached back to were judged in their own phase already: they
        # keep those signals and are neither judged again nor reported again
        fresh: list[PlottedPoint] = []
        for which, rules, fed in ((0, self.loc_rules, self.loc_fed),
                                  (1, self.disp_rules, self.disp_fed)):
            points = [point for pair in queue
                      if (point := pair[which]) is not None and not point.judged]
            if not points:
                continue
            fresh.extend(points)
            if len(points) >= VECTOR_MIN:
                _judge_vectorised(points, rules, fed)
            else:
                for point in points:
                    point.rules = rules.push(point.value)
                    fed.append(point.value)
            for point in points:
                point.judged = True
            chart = points[0].chart
            lo, _ = out.judged.get(chart, (points[0].index, points[0].index))
            out.judged[chart] = (lo, points[-1].index)
        for point in sorted(fresh, key=lambda p: (p.index, p.chart != self.loc_chart)):
            for rule_id in point.rules:
                out.firings.append(Firing(point.chart, rule_id, point.index, point.row,
                                          point.value, point.meta))
            # judged: its firings carry the row's tag now; the kept point need not (memory is
            # bounded by HISTORY_KEEP points per chart, and most of a point was its tag)
            point.meta = None

    # -- phases -------------------------------------------------------------------------------
    def new_baseline(self, start_index: int, baseline: int | None = None) -> None:
        """Start a new phase at location index `start_index`; limits are re-estimated from the
        next `baseline` plotted points from there. Points already judged keep their signals."""
        if start_index > self.next_index or start_index < 0:
            raise ValueError(f"a new phase can start at points 0..{self.next_index}")
        oldest = self.loc_history[0].index if self.loc_history else self.next_index
        if start_index < oldest:
            raise ValueError(f"point {start_index} is too far back (oldest kept: {oldest})")
        self.phase += 1
        self.phase_start = start_index
        self.problem = None  # the new phase's baseline is judged afresh
        self.phase_baseline = baseline or self.setup.baseline or self.phase_baseline
        disp_by_index = {d.index: d for d in self.disp_history}
        self.waiting = [
            (p, disp_by_index.get(p.index)) for p in self.loc_history if p.index >= start_index
        ]
        if self.setup.subgroup_size == 1 and self.waiting:
            # the moving range that spans the phase boundary is not part of the new baseline
            first, _ = self.waiting[0]
            self.waiting[0] = (first, None)
        self.limits = None
        self.loc_rules = None
        self.disp_rules = None

    def settle(self) -> LiveOutput:
        """Form limits now if the waiting baseline already holds enough points (after
        `new_baseline` reached back into points seen before)."""
        out = LiveOutput()
        if self.limits is not None or not self.waiting:
            return out
        limits = self._try_estimate(out)
        if limits is None:
            return out
        self._apply_limits(limits)
        out.limits = limits
        pending, self.waiting = self.waiting, []
        self._judge_all(pending, out)
        return out

    # -- persistence --------------------------------------------------------------------------
    def signature(self) -> str:
        """What the saved state depends on; a state saved under another setup is not reused."""
        s = self.setup
        rules = ",".join(f"{r.id}:{r.length}" for r in s.rules)
        return f"{s.subgroup_size}|{s.dispersion}|{rules}|{s.baseline}|{s.center}|{s.sigma}"

    def to_state(self) -> dict[str, Any]:
        """A JSON-ready snapshot from which `from_state` rebuilds this engine exactly."""
        disp_by_index = {d.index: d for d in self.disp_history}
        hist = list(self.loc_history)[-STATE_HISTORY:]
        return {
            "signature": self.signature(),
            "values_seen": self.values_seen,
            "pending": self.pending,
            "prev_value": self.prev_value,
            "phase": self.phase,
            "phase_start": self.phase_start,
            "phase_baseline": self.phase_baseline,
            "next_index": self.next_index,
            "problem": self.problem,
            "limits": _limits_to_dict(self.limits) if self.limits else None,
            "waiting": [[_point_to_list(p), _point_to_list(d)] for p, d in self.waiting],
            "history": [[_point_to_list(p), _point_to_list(disp_by_index.get(p.index))]
                        for p in hist],
            "loc_fed": list(self.loc_fed),
            "disp_fed": list(self.disp_fed),
        }

    @classmethod
    def from_state(cls, setup: ChartSetup, state: dict[str, Any]) -> CharacteristicEngine:
        """Rebuild an engine saved by `to_state`; a state from another setup starts afresh."""
        engine = cls(setup)
        if state.get("signature") != engine.signature():
            return engine
        engine.values_seen = state["values_seen"]
        engine.pending = list(state["pending"])
        engine.prev_value = state["prev_value"]
        engine.phase = state["phase"]
        engine.phase_start = state["phase_start"]
        engine.phase_baseline = state["phase_baseline"]
        engine.next_index = state["next_index"]
        engine.problem = state.get("problem")
        loc_c, disp_c = engine.loc_chart, engine.disp_chart
        for p, d in state["history"]:
            engine.loc_history.append(_point_from_list(loc_c, p))
            if d is not None:
                engine.disp_history.append(_point_from_list(disp_c, d))
        by_index = {p.index: p for p in engine.loc_history}
        dby_index = {d.index: d for d in engine.disp_history}
        engine.waiting = []
        for p, d in state["waiting"]:
            lp = by_index.get(p[0]) or _point_from_list(loc_c, p)
            dp = None if d is None else (dby_index.get(d[0]) or _point_from_list(disp_c, d))
            engine.waiting.append((lp, dp))
        if state["limits"] is None:
            engine.limits = engine.loc_rules = engine.disp_rules = None
        else:
            engine._apply_limits(_limits_from_dict(state["limits"]))
            assert engine.loc_rules is not None and engine.disp_rules is not None
            engine.loc_rules.replay(state["loc_fed"])
            engine.disp_rules.replay(state["disp_fed"])
            engine.loc_fed.extend(state["loc_fed"])
            engine.disp_fed.extend(state["disp_fed"])
        return engine
