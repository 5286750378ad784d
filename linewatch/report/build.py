"""The shift handover report: what happened on the line in a period, gathered from the store.

`build_report` reads the store once and returns a plain `ShiftReport`; the renderers
(`report_markdown`, `report_html`, `report_csv`) only format it. Points are selected by the time
they were received, alarms when they were open at some moment of the period.
"""

from __future__ import annotations

import dataclasses
import math
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

from linewatch.domain.durations import format_span
from linewatch.domain.records import CHART_INDIVIDUALS, CHART_MOVING_RANGE, CHART_XBAR, Limits

LOCATION_CHARTS = (CHART_INDIVIDUALS, CHART_XBAR)  # charts on the readings' own scale

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig, Config
    from linewatch.report.alarm_performance import AlarmPerformance, Episode
    from linewatch.store.alarm_rows import StoredAlarm
    from linewatch.store.audit import Verdict
    from linewatch.store.db import Store








def num(x: float | None, digits: int = 6) -> str:
    """A figure for people: `digits` significant digits, '' when missing."""
    if x is None or not math.isfinite(x):
        return ""
    return f"{x:.{digits}g}"


def ppm(x: float | None) -> str:
    """Parts per million in plain digits ('' when missing); see figures.fmt_ppm."""
    from linewatch.present.figures import fmt_ppm

    return fmt_ppm(x)


def reading(x: float | None, decimals: int | None) -> str:
    """A reading or a limit on the readings' scale with the characteristic's decimals, as the
    screen shows it ('' when missing; 6 significant digits when the decimals are unknown)."""
    from linewatch.present.figures import fmt_reading

    return num(x) if decimals is None else fmt_reading(x, decimals, "")


def interval(pair: tuple[float, float] | None, digits: int = 4) -> str:
    """'lo – hi', or '' when there is no interval."""
    if pair is None:
        return ""
    return f"{num(pair[0], digits)} – {num(pair[1], digits)}"


def rules_text(by_rule: dict[str, int]) -> str:
    """'we1 ×3, n7 ×1' (most frequent first)."""
    ordered = sorted(by_rule.items(), key=lambda kv: (-kv[1], kv[0]))
    return ", ".join(f"{rule} ×{count}" for rule, count in ordered)


@dataclass(slots=True)
class ChartTrace:
    """The plotted points of one location chart in the period, with limits per point."""

    chart: str
    indices: list[int] = field(default_factory=list)
    values: list[float] = field(default_factory=list)
    center: list[float | None] = field(default_factory=list)
    ucl: list[float | None] = field(default_factory=list)
    lcl: list[float | None] = field(default_factory=list)
    flagged: set[int] = field(default_factory=set)  # plotted indices inside an alarm


@dataclass(slots=True)
class CharacteristicPart:
    """Figures of one characteristic over the period."""

    name: str
    unit: str
    lsl: float | None
    usl: float | None
    subgroup_size: int
    n: int
    mean: float | None
    stdev: float | None
    ci95: tuple[float, float] | None
    cp: float | None
    cp_ci95: tuple[float, float] | None
    cpk: float | None
    cpk_ci95: tuple[float, float] | None
    ppm_out: float | None
    alarms_by_rule: dict[str, int]
    trace: ChartTrace
    decimals: int | None = None  # how its readings are shown (figures.reading_decimals)
    detector_traces: list[ChartTrace] = field(default_factory=list)  # EWMA, CUSUM C⁺ and C⁻
    # attribute data: the overall proportion or rate with its exact 95% interval (Cp and Cpk
    # do not apply; `present.attribute_figures.capability_record`)
    attribute: dict[str, Any] | None = None


@dataclass(slots=True)
class AlarmLine:
    """One alarm as the report shows it."""

    id: int
    kind: str
    characteristic: str
    chart: str
    rule: str
    what: str
    priority: int
    raised_at: float
    state: str
    acknowledged_by: str
    acknowledged_at: float | None
    unacknowledged_for: float  # seconds from raised to acknowledged (or to the period's end)
    still_unacknowledged: bool
    reason: str
    note: str
    returned_at: float | None
    closed_at: float | None
    signals: int = 0  # signalling points of every episode
    episodes: int = 1
    counts: str = ""  # per-rule counts, "we2 ×44 we3 ×37" (`alarms.rule_summary`)
    below_lsl: int | None = None  # out-of-spec: parts below LSL / above USL (None otherwise)
    above_usl: int | None = None
    escalated_at: float | None = None

    @property
    def label(self) -> str:
        """Which alarm, in a few words: "#12 outer-diameter individuals"."""
        return f"#{self.id} {self.characteristic} {self.chart}"


@dataclass(slots=True)
class EpisodeLine:
    """One episode of one alarm in the period, from the audit trail's raise / re-raise and
    return-to-normal entries: plotted indices (None for feed health) and times."""

    alarm_id: int
    started_at: float
    first_index: int | None
    returned_at: float | None  # None: not returned by the end of the period
    last_index: int | None
    shelved: bool


@dataclass(slots=True)
class LimitsChange:
    """Limits set in the period (a first baseline, a recalculation or a new baseline)."""

    at: float
    characteristic: str
    chart: str
    phase: int
    start_index: int
    center: float
    ucl: float
    lcl: float
    reason: str
    new_baseline: bool
    actor: str


@dataclass(slots=True)
class FeedLine:
    """A feed event in the period."""

    at: float
    kind: str
    file: str
    detail: str


@dataclass(slots=True)
class ShiftReport:
    """Everything one handover report says."""

    since: float
    until: float
    made_at: float
    state_dir: str
    characteristics: list[CharacteristicPart]
    alarms: list[AlarmLine]
    limits: list[LimitsChange]
    feed_events: list[FeedLine]
    audit_ok: bool
    audit_message: str
    audit_entries: int  # entries written in the period
    audit_anchor: str = ""  # the trail's head as an anchor line (see store/anchors.py)
    episodes: list[EpisodeLine] = field(default_factory=list)
    performance: AlarmPerformance | None = None

    def alarm(self, alarm_id: int) -> AlarmLine | None:
        """The report's line of one alarm (None when it was not open in the period)."""
        return next((a for a in self.alarms if a.id == alarm_id), None)

    def alarm_label(self, alarm_id: int) -> str:
        """"#12 outer-diameter individuals", or "#12" for an alarm the report does not list."""
        line = self.alarm(alarm_id)
        return line.label if line is not None else f"#{alarm_id}"

    def episodes_of(self, alarm_id: int) -> list[EpisodeLine]:
        """The alarm's episodes in the period, oldest first."""
        return [e for e in self.episodes if e.alarm_id == alarm_id]

    def alarm_tally(self) -> str:
        """One sentence: how many alarms, how many acknowledged and how fast, how many not."""
        if not self.alarms:
            return "No alarm was open in this period."
        acked = sorted(a.unacknowledged_for for a in self.alarms if not a.still_unacknowledged)
        waiting = [a for a in self.alarms if a.still_unacknowledged]
        text = f"{len(self.alarms)} alarms were open in this period: {len(acked)} acknowledged"
        if acked:
            median = acked[len(acked) // 2] if len(acked) % 2 else (
                (acked[len(acked) // 2 - 1] + acked[len(acked) // 2]) / 2
            )
            text += f" (median wait {format_span(median)}, longest {format_span(acked[-1])})"
        text += f", {len(waiting)} not acknowledged"
        if waiting:
            oldest = max(a.unacknowledged_for for a in waiting)
            text += f" (the oldest waiting {format_span(oldest)})"
        return text + "."

    @property
    def empty(self) -> bool:
        """Nothing was recorded in the period."""
        return not (
            any(c.n for c in self.characteristics) or self.alarms or self.limits
            or self.feed_events
        )


def _subgroup_size(
    store: Store, config: Config | None, name: str, limits: dict[str, Limits]
) -> int:
    """Subgroup size from the config, else as the store remembers it, else (a store written
    before it remembered) inferred from the stored limits.

    For X̄ charts the stored dispersion limits give it back: R̄ / σ(X̄) = d2(n)·√n and
    s̄ / σ(X̄) = c4(n)·√n, both increasing in n (common practice constants).
    """
    if config is not None:
        c = config.characteristic(name)
        if c is not None:
            return c.subgroup_size
    settings = store.history.settings(name)
    if settings is not None and settings.subgroup_size:
        return settings.subgroup_size
    if CHART_INDIVIDUALS in limits or CHART_MOVING_RANGE in limits or "xbar" not in limits:
        return 1
    from linewatch.engine.constants import MAX_N, MIN_N, c4, d2

    xbar = limits["xbar"]
    if "range" in limits:
        ratio, factor = limits["range"].center / xbar.sigma, d2
    elif "stdev" in limits:
        ratio, factor = limits["stdev"].center / xbar.sigma, c4
    else:
        return 1
    return min(range(MIN_N, MAX_N + 1), key=lambda n: abs(factor(n) * math.sqrt(n) - ratio))


def _limits_at(history: list[Limits], index: int) -> Limits | None:
    """The limits in effect at plotted point `index` (newest phase that starts at or before it)."""
    best: Limits | None = None
    for lim in history:
        if lim.start_index <= index and (best is None or lim.phase >= best.phase):
            best = lim
    return best


def _trace(
    chart: str, values: list[float], first_index: int, n: int, history: list[Limits],
    alarms: list[StoredAlarm], episodes: list[Episode],
) -> ChartTrace:
    """Plotted location statistic (individuals, or means of complete subgroups) with limits."""
    trace = ChartTrace(chart)
    if n > 1:
        # Subgroups are consecutive readings from index 0; keep only complete ones.
        start = (-first_index) % n
        for k in range(start, len(values) - n + 1, n):
            trace.indices.append((first_index + k) // n)
            trace.values.append(sum(values[k : k + n]) / n)
    else:
        trace.indices = [first_index + k for k in range(len(values))]
        trace.values = list(values)
    for i in trace.indices:
        lim = _limits_at(history, i)
        trace.center.append(lim.center if lim else None)
        trace.ucl.append(lim.ucl if lim else None)
        trace.lcl.append(lim.lcl if lim else None)
    _flag(trace, alarms, episodes)
    return trace


def _flag(trace: ChartTrace, alarms: list[StoredAlarm], episodes: list[Episode]) -> None:
    """Mark the points inside an alarm's episodes on `trace`."""
    chart = trace.chart
    # Flag each episode's points (first to last firing), not all between an alarm's first and
    # latest firing: one alarm can span many episodes hours apart.
    mine = {a.id: a for a in alarms if a.chart == chart}
    for ep in episodes:
        alarm = mine.get(ep.alarm_id)
        if alarm is None or ep.first_index is None:
            continue
        last = ep.last_index
        if last is None:  # not returned: up to the alarm's latest firing
            last = alarm.last_index if alarm.last_index is not None else ep.first_index
        trace.flagged.update(range(ep.first_index, max(last, ep.first_index) + 1))


STEPPED_POINTS = 5000  # newest stored points of a stepped chart a report looks through


def _stepped_trace(store: Store, cfg: CharacteristicConfig, since: float,
                   alarms: list[StoredAlarm], episodes: list[Episode]) -> ChartTrace:
    """The location (or attribute) chart of a characteristic whose limits step, from the
    points stored with their own limits: each point's limits, drawn as steps. The period's
    points are those at or after the first point its readings closed (a point's line is its
    last row's)."""
    from linewatch.present.stepped_view import chart_names_of

    chart = chart_names_of(cfg)[0]
    trace = ChartTrace(chart)
    recs = store.stepped.last(cfg.name, chart, STEPPED_POINTS)
    first = next(iter(store.history.points(cfg.name, since)), None)
    for r in recs:
        if first is not None and r.file == first.file and r.line < first.line:
            continue  # closed before the period
        trace.indices.append(r.index)
        trace.values.append(r.value)
        trace.center.append(r.center)
        trace.ucl.append(r.ucl)
        trace.lcl.append(r.lcl)
    _flag(trace, alarms, episodes)
    return trace


def _what(text: str, chart: str) -> str:
    """The alarm's condition without a trailing "(CHART chart)": the report has a chart
    column."""
    suffix = f" ({chart} chart)"
    return text[: -len(suffix)] if text.endswith(suffix) else text


def build_report(
    store: Store, since: float, until: float, config: Config | None = None,
    now: float | None = None,
) -> ShiftReport:
    """Gather the report of [since, until) from `store` (nothing is written)."""
    from linewatch.alarms.book import AlarmBook
    from linewatch.alarms.wording import rule_summary
    from linewatch.engine.summary import summarize
    from linewatch.report.alarm_performance import (
        alarm_performance,
        episodes,
        flood_spans,
        marks_from_audit,
    )

    now = time.time() if now is None else now
    book = AlarmBook(store, config)
    alarm_rows = store.alarms.between(since, until)
    end = min(until, now)
    # The trail from the earliest raise of any alarm open in the period: waits and ages that
    # began before the period are measured from their real start.
    earliest = min([since, *(a.raised_at for a in alarm_rows)])
    trail = [e for e in store.audit.entries(earliest) if e.at < until]  # read once
    marks = marks_from_audit(e for e in trail if e.at < end)
    listed = {a.id for a in alarm_rows}
    period_episodes = [
        ep for ep in episodes(marks)
        if ep.alarm_id in listed and ep.started_at < end
        and (ep.returned_at is None or ep.returned_at >= since)
    ]
    flood_alarms, flood_window = book.policy.flood_limit(), book.policy.flood_window()
    # Rates over the time the store kept a record: a period reaching back before the first
    # entry would dilute them with time nobody watched.
    began = store.audit.first_at()
    watched_from = max(since, began) if began is not None and began < end else since
    performance = alarm_performance(marks, watched_from, end, flood_alarms, flood_window)
    performance.floods.extend(flood_spans(trail, since, end))

    alarms: list[AlarmLine] = []
    for a in alarm_rows:
        acked_at = a.acknowledged_at
        if acked_at is not None and acked_at >= until:
            acked_at = None  # acknowledged after the report's window: still waiting then
        acked = acked_at is not None
        waited = (end if acked_at is None else acked_at) - a.raised_at
        alarms.append(
            AlarmLine(
                id=a.id, kind=a.kind, characteristic=a.characteristic, chart=a.chart,
                rule=a.rule, what=_what(book.describe(a), a.chart), priority=a.priority,
                raised_at=a.raised_at,
                state=a.state(end), acknowledged_by=(a.acknowledged_by or "") if acked else "",
                acknowledged_at=acked_at,
                unacknowledged_for=max(0.0, waited), still_unacknowledged=not acked,
                reason=(a.reason or "") if acked else "", note=(a.note or "") if acked else "",
                returned_at=a.returned_at, closed_at=a.closed_at, signals=a.signals,
                episodes=a.episodes, counts=rule_summary(a), below_lsl=a.below_lsl,
                above_usl=a.above_usl, escalated_at=a.escalated_at,
            )
        )
    # Grouped per characteristic and chart, oldest first within a group.
    alarms.sort(key=lambda a: (a.characteristic, a.chart, a.id))

    names = list(dict.fromkeys(
        [c.name for c in config.characteristics] if config is not None else []
    ))
    for name in sorted(store.history.characteristics_with_points()):
        if name not in names:
            names.append(name)
    from linewatch.present.figures import reading_decimals

    parts: list[CharacteristicPart] = []
    for name in names:
        settings = store.history.settings(name)
        cfg = config.characteristic(name) if config is not None else None
        unit = cfg.unit if cfg else (settings.unit if settings else "")
        lsl = cfg.lsl if cfg else (settings.lsl if settings else None)
        usl = cfg.usl if cfg else (settings.usl if settings else None)
        history = [r.limits for r in store.history.limits_history(name, until=until)]
        current: dict[str, Limits] = {}
        for lim in history:
            current[lim.chart] = lim
        n = _subgroup_size(store, config, name, current)
        location = "xbar" if n > 1 else CHART_INDIVIDUALS
        loc = current.get(location)
        sigma_within = None
        if loc is not None:
            sigma_within = loc.sigma * math.sqrt(n) if n > 1 else loc.sigma
        points = store.history.points(name, since, until)
        values = [p.value for p in points]
        s = summarize(values, sigma_within=sigma_within, lsl=lsl, usl=usl)
        d, c = s.description, s.capability
        attribute = None
        if cfg is not None and cfg.is_attribute:  # a mean of 0/1 results is no figure
            from linewatch.present.attribute_figures import (
                attribute_capability,
                capability_record,
            )

            cap = attribute_capability(store, cfg)
            attribute = None if cap is None else capability_record(cap)
            d = dataclasses.replace(d, mean=None, stdev=None, ci95=None)
        mine = [a for a in alarm_rows if a.characteristic == name]
        by_rule: dict[str, int] = {}
        for a in mine:
            by_rule[a.rule] = by_rule.get(a.rule, 0) + 1
        trace = _trace(
            location, values, points[0].index if points else 0, n,
            [lim for lim in history if lim.chart == location], mine, period_episodes,
        )
        if cfg is not None and (cfg.sizes_vary or cfg.is_attribute):
            trace = _stepped_trace(store, cfg, since, mine, period_episodes)
            location = trace.chart
        from linewatch.report.detector_traces import detector_traces

        fired = store.alarms.signals_over(name, trace.indices[0]).get(location, {}) \
            if trace.indices else {}
        detectors = detector_traces(cfg, trace, [lim for lim in history
                                                 if lim.chart == location], fired)
        parts.append(
            CharacteristicPart(
                detector_traces=detectors, attribute=attribute,
                name=name, unit=unit, lsl=lsl, usl=usl, subgroup_size=n, n=d.points,
                mean=d.mean, stdev=d.stdev, ci95=d.ci95, cp=c.cp, cp_ci95=c.cp_ci95, cpk=c.cpk,
                cpk_ci95=c.cpk_ci95, ppm_out=c.ppm_out, alarms_by_rule=by_rule, trace=trace,
                decimals=reading_decimals(cfg.decimals if cfg else None, lsl, usl, sigma_within,
                                          values[-200:]),
            )
        )

    period = [e for e in trail if e.at >= since]
    baselines = {
        (e.subject, round(e.at, 6)): e.actor for e in period if e.action == "new-baseline"
    }
    actors = {
        (e.subject, round(e.at, 6)): e.actor
        for e in period if e.action in ("limits-set", "new-baseline")
    }
    limits: list[LimitsChange] = []
    for r in store.history.limits_history(since=since, until=until):
        lim = r.limits
        key = (f"{lim.characteristic}/{lim.chart}", round(r.set_at, 6))
        limits.append(
            LimitsChange(
                at=r.set_at, characteristic=lim.characteristic, chart=lim.chart, phase=lim.phase,
                start_index=lim.start_index, center=lim.center, ucl=lim.ucl, lcl=lim.lcl,
                reason=r.reason, new_baseline=key in baselines, actor=actors.get(key, ""),
            )
        )
    feed = [
        FeedLine(r.at, r.event.kind, r.event.file, r.event.detail)
        for r in store.history.feed_events(since, until)
    ]
    verdict, anchor = _audit_state(store, now)
    return ShiftReport(
        since=since, until=until, made_at=now, state_dir=str(store.directory.resolve()),
        characteristics=parts, alarms=alarms, limits=limits, feed_events=feed,
        audit_ok=verdict.ok, audit_message=verdict.message, audit_entries=len(period),
        audit_anchor=anchor,
        episodes=[EpisodeLine(ep.alarm_id, ep.started_at, ep.first_index, ep.returned_at,
                              ep.last_index, ep.shelved) for ep in period_episodes],
        performance=performance,
    )


def _audit_state(store: Store, now: float) -> tuple[Verdict, str]:
    """The trail's verdict and its head as an anchor line, read from one commit: the report
    is itself an anchor kept outside the store (`audit verify --anchor REPORT`)."""
    from linewatch.store.anchors import anchor_line

    with store.snapshot():
        verdict = store.audit.verify()
        entries, head = store.audit.head()
    return verdict, anchor_line(store.directory, entries, head, now, "report")


def anchor_sentence() -> str:
    """What the report's anchor line is for, in one sentence (all formats)."""
    return ("Audit anchor (file a copy of this report away from the line PC; "
            "`linewatch audit verify --anchor REPORT` checks the trail still holds what "
            "it held now):")


# -- alarm episodes and performance, worded once for every format ---------------------------

EPISODES_SHOWN = 12  # per alarm in the Markdown / HTML list; the CSV lists every one
# The guidance figures below (about 1 and about 2 alarms per 10 minutes for one operator, a flood
# above about 10) are ISA-18.2's, quoted from memory (see linewatch.report.alarm_performance).
GUIDANCE_SOURCE = (
    "Guidance figures: the alarm-management standard ISA-18.2 (IEC 62682) and its guidance, "
    "for one operator; linewatch counts one operator per state directory. An alarm shown is a "
    "raise or re-raise that was not shelved."
)


def index_range(first: int | None, last: int | None, returned: bool) -> str:
    """Plotted points of an episode: "61", "61–64", "70–…" (not returned); '' for feed health."""
    if first is None:
        return ""
    if not returned:
        return f"{first}–…"
    if last is None or last == first:
        return str(first)
    return f"{first}–{last}"




def episode_text(ep: EpisodeLine, at: Callable[[float | None], str]) -> str:
    """One episode in a few words: "points 61–64, 06:30:00 to 06:31:10" ("… still active")."""
    points = index_range(ep.first_index, ep.last_index, ep.returned_at is not None)
    where = f"points {points}, " if points else ""
    when = (f"{at(ep.started_at)} to {at(ep.returned_at)}" if ep.returned_at is not None
            else f"from {at(ep.started_at)}, still active")
    return f"{where}{when}{' (shelved)' if ep.shelved else ''}"


def episode_list(r: ShiftReport, alarm: AlarmLine, at: Callable[[float | None], str]) -> str:
    """An alarm's episodes of the period on one line, the newest EPISODES_SHOWN at most."""
    eps = r.episodes_of(alarm.id)
    shown = eps[-EPISODES_SHOWN:]
    text = "; ".join(episode_text(ep, at) for ep in shown)
    if len(eps) > len(shown):
        text = f"{len(eps) - len(shown)} earlier not shown (see the CSV); " + text
    return text


def out_of_spec_text(a: AlarmLine) -> str:
    """"3 below LSL, 1 above USL" for an out-of-spec alarm, '' for others."""
    if a.below_lsl is None and a.above_usl is None:
        return ""
    return f"{a.below_lsl or 0} below LSL, {a.above_usl or 0} above USL"


def window_words(seconds: float) -> str:
    """"10-minute" for a window length (to the minute, or seconds below one)."""
    return f"{seconds / 60:g}-minute" if seconds >= 60 else f"{seconds:g}-second"


def performance_rows(p: AlarmPerformance) -> list[tuple[str, str, str]]:
    """(figure, this period, guidance) rows of the alarm-performance table."""
    share = p.flood_share
    flood = f"{p.flood_windows} of {p.windows}"
    if share is not None:
        flood += f" ({100 * share:.0f}%)"
    waits = len(p.acknowledge_times)
    median = format_span(p.median_to_acknowledge)
    if median:
        median += f" ({waits} acknowledgement{'s' if waits != 1 else ''})"
    return [
        ("alarms shown", str(p.annunciations), ""),
        ("alarms per 10 minutes, mean", f"{p.per_ten_minutes:.2f}",
         "about 1 is very likely acceptable, about 2 the most that is manageable"),
        ("alarms per 10 minutes, peak", str(p.peak_ten_minutes),
         "more than about 10 in 10 minutes is a flood"),
        (f"{window_words(p.flood_window)} windows in flood (more than {p.flood_alarms} alarms)",
         flood, "none, or as few as possible"),
        ("floods announced on the screen", str(len(p.floods)), ""),
        ("chattering alarms (re-raised 3 or more times within a minute)",
         str(len(p.chattering)), "none"),
        ("alarms still open at the end", str(len(p.open_at_end)), ""),
        ("time to acknowledge (from first shown), median", median or "—", ""),
        ("time to acknowledge (from first shown), longest",
         format_span(p.longest_to_acknowledge) or "—", ""),
    ]


def performance_sentence(p: AlarmPerformance) -> str:
    """The period's load beside the guidance, in one sentence."""
    from linewatch.report.alarm_performance import TEN_MINUTES, guidance_verdict

    text = (f"{p.annunciations} alarm{'s' if p.annunciations != 1 else ''} shown in "
            f"{format_span(p.end - p.since)} watched: {p.per_ten_minutes:.2f} per 10 minutes on "
            f"average, {guidance_verdict(p.per_ten_minutes)}")
    if p.flood_windows:
        text += (f"; in flood (more than {p.flood_alarms} alarms) in {p.flood_windows} of "
                 f"{p.windows} {window_words(p.flood_window)} windows")
    if 0 < p.end - p.since < TEN_MINUTES:
        text += " (less than 10 minutes watched: the mean is extrapolated, the peak is not)"
    return text + "."
