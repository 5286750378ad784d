"""The live engine: one characteristic charted as its values arrive, in any chunking.

`CharacteristicEngine` is what `watch` feeds: it plots points, forms each phase's limits from its
baseline, judges new points with the incremental rule counters (a few points) or one numpy pass
over the recent tail (a chunk of `vector_min` points or more), and starts new phases. Whatever the
chunking it gives the limits and firings of the batch path (`engine.batch`); its saved form is
`engine.live_state`.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

import numpy as np

from linewatch.domain.errors import BadLimits, NotEnoughData
from linewatch.engine.charts import plotted_series, subgroup_stats
from linewatch.engine.detectors import detect
from linewatch.engine.detectors.cusum import CusumTrace
from linewatch.engine.detectors.detect import DetectorState
from linewatch.engine.limits import MIN_BASELINE, LimitSet, estimate_limits, given_limits
from linewatch.engine.rules import classify, evaluate_classified
from linewatch.engine.setup import ChartSetup, Firing, detector_value, limit_state
from linewatch.engine.stream import ChartRules, lookback

VECTOR_MIN = 32  # default: judge this many new points or more in one vectorised pass
HISTORY_KEEP = 2000  # plotted points kept in memory per chart (a new baseline reaches back)


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


DetectorHits = dict[int, list[tuple[str, str, float]]]  # position -> (detector, side, value)


def _detect_chunk(
    setup: ChartSetup, limits: LimitSet, states: dict[str, DetectorState], values: np.ndarray,
    vector_min: int,
) -> DetectorHits:
    """Detector firings at each position of `values` (new location points in order), point by
    point for fewer than `vector_min`, else in one numpy pass; `states` are brought up to date."""
    hits: DetectorHits = {}
    if not setup.detectors or values.shape[0] == 0:
        return hits
    lim = limits.location
    for det in setup.detectors:
        if values.shape[0] >= vector_min:
            trace, states[det.id] = detect.run(det, detect.standardise(values, lim.center,
                                                                       lim.sigma),
                                               states[det.id])
            for f in detect.firings(det, trace):
                stat = _trace_statistic(trace, f.at, f.side)
                hits.setdefault(f.at, []).append((det.id, f.side,
                                                  detector_value(det, lim, stat)))
            continue
        state = states[det.id]
        for k, v in enumerate(values.tolist()):
            for side in detect.push_point(det, (v - lim.center) / lim.sigma, state):
                up, down = detect.statistic_now(state)
                stat = down if side == detect.DOWN and down is not None else up
                hits.setdefault(k, []).append((det.id, side, detector_value(det, lim, stat)))
    return hits


def _trace_statistic(trace: detect.DetectorTrace, at: int, side: str) -> float:
    if isinstance(trace, CusumTrace):
        return float(trace.lower[at] if side == detect.DOWN else trace.upper[at])
    return float(trace.statistic[at])


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
    """Live charting of one characteristic: feed values in order, in any chunking.

    `vector_min` is the chunk size (in plotted points) from which new points are judged in one
    numpy pass instead of point by point; both ways give the same firings."""

    def __init__(self, setup: ChartSetup, vector_min: int = VECTOR_MIN) -> None:
        if setup.baseline is None and setup.sigma is None:
            raise ValueError("a live engine needs a baseline length or known limits")
        if vector_min < 1:
            raise ValueError(f"vector_min must be at least 1, got {vector_min}")
        self.setup = setup
        self.vector_min = vector_min
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
        # detector statistics of this phase (they remember the whole phase: saved, not replayed)
        self.detector_states: dict[str, DetectorState] = {}
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
        self.loc_rules = ChartRules(self.setup.rules, limit_state(limits.location))
        self.disp_rules = ChartRules(self.setup.dispersion_rules, limit_state(limits.dispersion))
        self.loc_fed.clear()
        self.disp_fed.clear()
        self.detector_states = {d.id: detect.new_state(d) for d in self.setup.detectors}

    def resume(self, limits: LimitSet, loc_fed: Iterable[float], disp_fed: Iterable[float],
               detector_states: dict[str, DetectorState] | None = None) -> None:
        """Take `limits` as this phase's limits, with the rule counters rebuilt from the values
        judged against them most recently (`loc_fed`, `disp_fed`: as after a restart) and the
        detectors' saved states."""
        self._apply_limits(limits)
        self.detector_states.update(detector_states or {})
        assert self.loc_rules is not None and self.disp_rules is not None
        self.loc_fed.extend(loc_fed)
        self.disp_fed.extend(disp_fed)
        self.loc_rules.replay(list(self.loc_fed))
        self.disp_rules.replay(list(self.disp_fed))

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
                and len(values) >= self.vector_min * self.setup.subgroup_size):
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
            if self.limits is not None and not self.waiting and rest >= self.vector_min * n:
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
        assert self.limits is not None
        det_hits = _detect_chunk(self.setup, self.limits, self.detector_states, loc_vals, 1)
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
        detector_charts = [(d.id, start) for d in self.setup.detectors]
        for chart, lo in ((self.loc_chart, start), (self.disp_chart, start + disp_from),
                          *detector_charts):
            if lo <= start + count - 1:
                earlier, _ = out.judged.get(chart, (lo, lo))
                out.judged[chart] = (min(earlier, lo), start + count - 1)
        for k in sorted(set(loc_hits) | {j + disp_from for j in disp_hits} | set(det_hits)):
            for chart, hits, pos, vals in ((self.loc_chart, loc_hits, k, loc_vals),
                                           (self.disp_chart, disp_hits, k - disp_from,
                                            disp_vals)):
                for rule_id in hits.get(pos, []):
                    out.firings.append(Firing(chart, rule_id, start + k, int(rows[k]),
                                              float(vals[k]), tag_of(k)))
            for det_id, side, value in det_hits.get(k, []):
                out.firings.append(Firing(det_id, det_id, start + k, int(rows[k]), value,
                                          tag_of(k), side))

    def _plot(self, loc: PlottedPoint, disp: PlottedPoint | None, out: LiveOutput,
              queue: list[tuple[PlottedPoint, PlottedPoint | None]]) -> None:
        """Keep a new point; queue it for judging once this phase has limits."""
        self.loc_history.append(loc)
        out.points.append(loc)
        if disp is not None:
            self.disp_history.append(disp)
            out.points.append(disp)
        if self.limits is None:
            if self.problem is not None:
                # limits were refused for this phase: its baseline is fixed, so later points
                # can neither help nor be judged; kept in the history only (a waiting list
                # that grew with every reading would grow the saved state all shift)
                return
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
        det_hits: dict[int, list[tuple[str, str, float]]] = {}  # point index -> hits
        for which, rules, fed in ((0, self.loc_rules, self.loc_fed),
                                  (1, self.disp_rules, self.disp_fed)):
            points = [point for pair in queue
                      if (point := pair[which]) is not None and not point.judged]
            if not points:
                continue
            fresh.extend(points)
            if len(points) >= self.vector_min:
                _judge_vectorised(points, rules, fed)
            else:
                for point in points:
                    point.rules = rules.push(point.value)
                    fed.append(point.value)
            for point in points:
                point.judged = True
            charts = [points[0].chart]
            if which == 0 and self.setup.detectors:
                assert self.limits is not None
                values = np.array([p.value for p in points], dtype=float)
                hits = _detect_chunk(self.setup, self.limits, self.detector_states, values,
                                     self.vector_min)
                det_hits = {points[k].index: h for k, h in hits.items()}
                charts += [d.id for d in self.setup.detectors]
            for chart in charts:
                lo, _ = out.judged.get(chart, (points[0].index, points[0].index))
                out.judged[chart] = (lo, points[-1].index)
        # at each point: the location chart's firings, the dispersion chart's, the detectors'
        found: list[tuple[int, int, Firing]] = []
        for point in fresh:
            is_loc = point.chart == self.loc_chart
            for rule_id in point.rules:
                found.append((point.index, 0 if is_loc else 1,
                              Firing(point.chart, rule_id, point.index, point.row, point.value,
                                     point.meta)))
            if is_loc:
                for det_id, side, value in det_hits.get(point.index, []):
                    found.append((point.index, 2, Firing(det_id, det_id, point.index, point.row,
                                                         value, point.meta, side)))
        found.sort(key=lambda item: (item[0], item[1]))  # stable: rule order kept
        out.firings.extend(f for _, _, f in found)
        for point in fresh:
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
        self.detector_states = {}

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
