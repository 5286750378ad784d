"""The live engine for charts whose limits step: subgroups that follow the data (a sample id, a
clock window, a count of rows) of measured values, and the attribute charts (p, np, c, u,
Laney p′ and u′).

Rows arrive in any chunking; `SubgroupCollector` closes subgroups (a change of sample id, the
clock leaving a window or passing `timeout`, a count of rows). The first `baseline` subgroups of
a phase give the Phase I figures (`variable_limits.estimate_model` or
`attribute_charts.estimate_attribute`, the very functions the batch path calls), every point
gets the limits of its own size, and the unchanged rules judge z_i = (x_i − CL_i)/σ_i
(`stepped.standard_point`, counters of `stream.ChartRules` against centre 0, σ 1, ±3). A
property test holds it to the batch path for any chunking, clock and save/restore point; the
saved form is `stepped_live_state`.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Hashable, Iterable
from dataclasses import dataclass, field
from math import floor

import numpy as np

from linewatch.domain.errors import BadLimits, ChartDataError, NotEnoughData
from linewatch.domain.records import CHART_C
from linewatch.engine.attribute_charts import (
    AttributeModel,
    check_data,
    estimate_attribute,
    given_attribute,
    plotted,
)
from linewatch.engine.constants import MAX_N, MIN_N
from linewatch.engine.limits import MIN_BASELINE
from linewatch.engine.setup import ChartSetup, Firing, limit_state
from linewatch.engine.stepped import standard_point, z_limits
from linewatch.engine.stream import ChartRules, lookback
from linewatch.engine.subgroup_collector import ClosedSubgroup, SubgroupCollector
from linewatch.engine.subgroups import subgroup_stats_of
from linewatch.engine.variable_limits import SizeModel, estimate_model, given_model

HISTORY_KEEP = 2000  # closed subgroups kept in memory (a new baseline reaches back)

Model = SizeModel | AttributeModel


@dataclass(slots=True)
class Subgroup:
    """One closed subgroup's figures. Variables: `value` the mean, `spread` the SD or range
    (None for one value), `n` the values. Attributes: `value` the count d_i or c_i, `n` the
    units (or inspection units) it was found in."""

    index: int
    n: float
    value: float
    spread: float | None
    row: int  # position of its last row among the rows pushed
    phase: int
    meta: object = None
    judged: bool = False


@dataclass(slots=True)
class SteppedPoint:
    """A plotted point with its own limits (None until its phase has them)."""

    chart: str
    index: int
    value: float
    n: float
    row: int
    phase: int
    center: float | None = None
    sigma: float | None = None
    ucl: float | None = None
    lcl: float | None = None
    rules: list[str] = field(default_factory=list)
    meta: object = None


@dataclass(slots=True)
class SteppedOutput:
    """What one `push` or `expire` produced."""

    points: list[SteppedPoint] = field(default_factory=list)  # every point closed or judged
    firings: list[Firing] = field(default_factory=list)
    model: Model | None = None  # set when a phase's limits took effect
    judged: dict[str, tuple[int, int]] = field(default_factory=dict)  # chart -> index range
    problem: str | None = None  # limits could not be formed, or a subgroup not charted
    singles: list[int] = field(default_factory=list)  # subgroups of one value (X̄ only)


class SteppedEngine:
    """Live charting of one characteristic with stepped limits.

    Rows are (label, x, size, time, meta): the sample id (ignored when subgroups are by count or
    clock window), the value (variables) or count (attributes), the units inspected in the row
    (attributes; 1 for a pass/fail result), the row's time stamp in seconds (None when the log
    has none) and what the caller attaches (JSON-ready). `offset` is the local clock's seconds
    east of UTC, so clock windows start on the wall clock's quarter or hour."""

    def __init__(self, setup: ChartSetup, offset: float = 0.0) -> None:
        if setup.baseline is None and not self._given(setup):
            raise ValueError("a live engine needs a baseline length or known limits")
        self.setup = setup
        self.offset = offset
        self.attribute = setup.attribute_chart
        self.charts: tuple[str, ...] = (
            (self.attribute,) if self.attribute else SizeModel(0, 1, setup.dispersion, "").charts)
        self.collector = self._new_collector(setup, offset)
        self.rows_seen = 0
        self.next_index = 0
        self.phase = 0
        self.phase_start = 0
        self.phase_baseline = setup.baseline or 0
        self.model: Model | None = None
        self.problem: str | None = None
        self.waiting: list[Subgroup] = []
        self.history: deque[Subgroup] = deque(maxlen=HISTORY_KEEP)
        self.rules: dict[str, ChartRules] = {}
        self.fed: dict[str, deque[float]] = {}
        self._reset_rules()
        if self._given(setup):
            self.model = self._given_model()

    # -- set-up -------------------------------------------------------------------------------
    @staticmethod
    def _given(setup: ChartSetup) -> bool:
        if setup.attribute_chart:  # a Laney chart still takes σ_z from its baseline
            return setup.center is not None and not setup.attribute_chart.startswith("laney")
        return setup.center is not None and setup.sigma is not None

    @staticmethod
    def _new_collector(setup: ChartSetup, offset: float) -> SubgroupCollector:
        if setup.subgroups == "window":
            return SubgroupCollector(window=setup.window, offset=offset)
        if setup.subgroups == "label":
            return SubgroupCollector(timeout=setup.timeout)
        return SubgroupCollector(size=max(1, setup.subgroup_size))

    def _given_model(self) -> Model:
        s = self.setup
        assert s.center is not None
        if self.attribute:
            return given_attribute(self.attribute, s.center)
        assert s.sigma is not None
        return given_model(s.center, s.sigma, s.dispersion)

    def _reset_rules(self) -> None:
        for k, chart in enumerate(self.charts):
            specs = self.setup.rules if k == 0 else self.setup.dispersion_rules
            self.rules[chart] = ChartRules(specs, limit_state(z_limits(chart)))
            self.fed[chart] = deque(maxlen=lookback(specs))

    @property
    def baseline_needed(self) -> int:
        """Subgroups still needed before this phase has limits (0 once it has them)."""
        if self.model is not None:
            return 0
        return max(0, max(self.phase_baseline, MIN_BASELINE) - len(self.waiting))

    # -- feeding ------------------------------------------------------------------------------
    def push(self, rows: Iterable[tuple[Hashable, float | None, float, float | None, object]]
             ) -> SteppedOutput:
        """Feed the next rows in order; the points of the subgroups they closed."""
        out = SteppedOutput()
        window = self.setup.subgroups == "window"
        for label, x, size, when, meta in rows:
            row = self.rows_seen
            self.rows_seen += 1
            if window:
                if when is None:
                    continue  # (the feed reports rows without a readable time stamp)
                label = float(floor((when + self.offset) / float(self.setup.window or 1)))
            tag = [row, size, meta]
            for closed in self.collector.push([(label, x, when, tag)]):
                self._close(closed, out)
        return out

    def expire(self, now: float | None) -> SteppedOutput:
        """Close the open subgroup when the clock says no more rows belong to it."""
        out = SteppedOutput()
        closed = None if now is None else self.collector.expire(now)
        if closed is not None:
            self._close(closed, out)
        return out

    def _close(self, closed: ClosedSubgroup, out: SteppedOutput) -> None:
        tags: list[list[object]] = closed.meta  # type: ignore[assignment]
        last_row = int(tags[-1][0])  # type: ignore[call-overload]
        meta = tags[-1][2]
        values = closed.values
        if self.attribute:
            size = float(sum(t[1] for t in tags))  # type: ignore[misc]
            sub = Subgroup(self.next_index, 1.0 if self.attribute == CHART_C else size,
                           float(sum(values)), None, int(last_row), self.phase, meta)
            why = self._unchartable(sub)
            if why is not None:
                out.problem = f"subgroup ending at row {sub.row + 1} not charted: {why}"
                return
        else:
            if len(values) > MAX_N:
                out.problem = (f"a subgroup of {len(values)} values is not charted; subgroups "
                               f"of 1 to {MAX_N} can be")
                return
            stats = subgroup_stats_of([values])
            spread = stats.ranges[0] if self.setup.dispersion == "range" else stats.sds[0]
            sub = Subgroup(self.next_index, float(len(values)), float(stats.means[0]),
                           None if len(values) < MIN_N else float(spread), int(last_row),
                           self.phase, meta)
            if len(values) < MIN_N:
                out.singles.append(sub.index)
        self.next_index += 1
        self.history.append(sub)
        if self.model is None:
            if self.problem is not None:
                return  # limits were refused for this phase: kept in the history only
            self.waiting.append(sub)
            out.points.extend(self._points(sub))
            self._try_estimate(out)
            return
        self._judge([sub], out)

    def _unchartable(self, sub: Subgroup) -> str | None:
        """Why an attribute chart cannot take this subgroup (None: it can)."""
        assert self.attribute is not None
        try:
            check_data(self.attribute, np.array([sub.value]), np.array([sub.n]))
        except ChartDataError as exc:
            return str(exc).split(": ", 1)[-1]
        model = self.model
        if isinstance(model, AttributeModel) and model.size is not None and sub.n != model.size:
            return (f"{sub.n:g} units where the np chart's subgroups have {model.size}; use "
                    "the p chart (--chart p) for varying sizes")
        return None

    # -- limits -------------------------------------------------------------------------------
    def _try_estimate(self, out: SteppedOutput) -> None:
        need = max(self.phase_baseline, MIN_BASELINE)
        if len(self.waiting) < need:
            return
        base = self.waiting[:need]
        try:
            self.model = self._estimate(base)
        except (BadLimits, NotEnoughData, ChartDataError) as exc:
            if self.problem is None:
                self.problem = out.problem = str(exc)
            return
        out.model = self.model
        self._reset_rules()
        waiting, self.waiting = self.waiting, []
        self._judge(waiting, out)

    def _estimate(self, base: list[Subgroup]) -> Model:
        s = self.setup
        if self.attribute:
            counts = np.array([b.value for b in base])
            sizes = np.array([b.n for b in base])
            center = s.center if self.attribute.startswith("laney") else None
            model, _ = estimate_attribute(self.attribute, counts, sizes, None, center)
            return model
        from linewatch.engine.subgroups import SubgroupStats

        sizes = np.array([int(b.n) for b in base], dtype=np.int64)
        spreads = np.array([np.nan if b.spread is None else b.spread for b in base])
        stats = SubgroupStats(sizes, np.array([b.value for b in base]), spreads, spreads,
                              np.array([b.row for b in base], dtype=np.int64))
        return estimate_model(stats, s.dispersion)

    def _points(self, sub: Subgroup) -> list[SteppedPoint]:
        """The points of one subgroup, with its limits when the phase has them."""
        model = self.model
        if self.attribute:
            value = float(plotted(self.attribute, np.array([sub.value]), np.array([sub.n]))[0])
            p = SteppedPoint(self.attribute, sub.index, value, sub.n, sub.row, sub.phase,
                             meta=sub.meta)
            if isinstance(model, AttributeModel):
                _set_limits(p, *model.steps(np.array([sub.n])).point(0))
            return [p]
        loc = SteppedPoint(self.charts[0], sub.index, sub.value, sub.n, sub.row, sub.phase,
                           meta=sub.meta)
        points = [loc]
        disp = None
        if sub.spread is not None:
            disp = SteppedPoint(self.charts[1], sub.index, sub.spread, sub.n, sub.row,
                                sub.phase, meta=sub.meta)
            points.append(disp)
        if isinstance(model, SizeModel):
            n = np.array([int(sub.n)])
            _set_limits(loc, *model.location_steps(n).point(0))
            if disp is not None:
                _set_limits(disp, *model.dispersion_steps(n).point(0))
        return points

    def _judge(self, subs: list[Subgroup], out: SteppedOutput) -> None:
        """Judge closed subgroups in order against their own limits (z against ±3)."""
        for sub in subs:
            if sub.judged:  # judged in an earlier phase: keeps its signals
                continue
            sub.judged = True
            for point in self._points(sub):
                assert point.center is not None and point.sigma is not None
                z = standard_point(point.value, point.center, point.sigma)
                point.rules = self.rules[point.chart].push(z)
                self.fed[point.chart].append(z)
                lo, _ = out.judged.get(point.chart, (point.index, point.index))
                out.judged[point.chart] = (lo, point.index)
                out.points.append(point)
                out.firings.extend(Firing(point.chart, rule, point.index, point.row,
                                          point.value, point.meta) for rule in point.rules)

    # -- phases -------------------------------------------------------------------------------
    def new_baseline(self, start_index: int, baseline: int | None = None) -> None:
        """Start a new phase at subgroup `start_index`; its limits come from the next
        `baseline` subgroups from there. Subgroups already judged keep their signals."""
        if start_index > self.next_index or start_index < 0:
            raise ValueError(f"a new phase can start at points 0..{self.next_index}")
        oldest = self.history[0].index if self.history else self.next_index
        if start_index < oldest:
            raise ValueError(f"point {start_index} is too far back (oldest kept: {oldest})")
        self.phase += 1
        self.phase_start = start_index
        self.problem = None
        self.phase_baseline = baseline or self.setup.baseline or self.phase_baseline
        self.waiting = [s for s in self.history if s.index >= start_index]
        self.model = None
        self._reset_rules()

    def settle(self) -> SteppedOutput:
        """Form limits now if the waiting baseline already holds enough subgroups."""
        out = SteppedOutput()
        if self.model is None and self.waiting:
            self._try_estimate(out)
        return out


def _set_limits(p: SteppedPoint, center: float, sigma: float, ucl: float, lcl: float) -> None:
    p.center, p.sigma, p.ucl, p.lcl = center, sigma, ucl, lcl
