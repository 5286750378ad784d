"""Build the faces' picture (`view.LineSnapshot`) from the store.

Collector and viewers both read the store, so every instance on a state directory shows the
same line. Plotted points are recomputed from the stored raw readings (a reading's index k is
the k-th value of its characteristic, so subgroup j holds indices j·n .. j·n + n − 1).
"""

from __future__ import annotations

import contextlib
import fnmatch
import time
from collections.abc import Iterable
from typing import TYPE_CHECKING

import numpy as np

from linewatch.domain.records import FeedEvent
from linewatch.engine.charts import chart_names, plotted_series
from linewatch.feeds.health import times_text
from linewatch.pipeline.stepped_rows import is_stepped
from linewatch.present.mark_points import mark_chart
from linewatch.present.view import (
    ACKNOWLEDGED,
    RETURNED_UNACKNOWLEDGED,
    STATE_ALARM,
    STATE_LEARNING,
    STATE_OK,
    STATE_REFUSED,
    STATE_STALE,
    STATE_WATCH,
    UNACKNOWLEDGED,
    AlarmView,
    CharacteristicView,
    ChartView,
    FeedView,
    LineSnapshot,
    PhaseStats,
)

if TYPE_CHECKING:
    from linewatch.alarms.book import AlarmBook
    from linewatch.config.model import CharacteristicConfig
    from linewatch.store.alarm_rows import StoredAlarm
    from linewatch.store.db import Store
    from linewatch.store.points import StoredLimits, StoredPoint

OVERVIEW_POINTS = 120  # raw readings per characteristic on the overview
DETAIL_POINTS = 1500  # raw readings per characteristic in the detail view
RATE_WINDOW = 60.0  # seconds over which rows per second are measured
RECENT_VALUES = 100  # individual readings for the detail's box plot


def _chart_view(chart: str, values: np.ndarray, indices: np.ndarray,
                limits_hist: list[StoredLimits], marks: dict[int, list[str]]) -> ChartView:
    cv = ChartView(chart, values.tolist(), indices.tolist(),
                   [",".join(marks.get(int(i), [])) for i in indices])
    mine = [r.limits for r in limits_hist if r.limits.chart == chart]
    if mine:
        cur = mine[-1]
        cv.center, cv.ucl, cv.lcl, cv.sigma = cur.center, cur.ucl, cur.lcl, cur.sigma
        cv.phase_starts = sorted({lim.start_index for lim in mine if lim.phase > 0})
        latest: dict[int, tuple[int, float, float, float, float]] = {}
        for lim in mine:  # the newest limits of each phase
            latest[lim.phase] = (lim.start_index, lim.center, lim.ucl, lim.lcl, lim.sigma)
        cv.phase_limits = [latest[p] for p in sorted(latest)]
    return mark_chart(cv)


def _plotted(
    values: np.ndarray, first_index: int, n: int, dispersion: str
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Plotted location and dispersion points of raw readings starting at `first_index`."""
    if n == 1:
        loc, disp = plotted_series(values, 1, dispersion)
        return (loc.values, loc.indices + first_index, disp.values, disp.indices + first_index)
    skip = (-first_index) % n  # align to subgroup boundaries
    vals = values[skip:]
    loc, disp = plotted_series(vals, n, dispersion)
    base = (first_index + skip) // n
    return loc.values, loc.indices + base, disp.values, disp.indices + base


def _phase_stats(values: np.ndarray, first_index: int, limits_hist: list[StoredLimits],
                 c: CharacteristicConfig, n: int) -> list[PhaseStats]:
    from linewatch.engine.summary import capability, describe

    loc_chart = chart_names(n, c.effective_dispersion)[0]
    phases = sorted({(r.limits.phase, r.limits.start_index, r.limits.sigma)
                     for r in limits_hist if r.limits.chart == loc_chart})
    out = []
    for k, (phase, start, sigma_loc) in enumerate(phases):
        end = phases[k + 1][1] if k + 1 < len(phases) else None
        lo = max(0, start * n - first_index)
        hi = None if end is None else max(0, end * n - first_index)
        seg = values[lo:hi]
        d = describe(seg)
        cap = capability(seg, sigma_loc * np.sqrt(n), c.lsl, c.usl)
        out.append(PhaseStats(phase, start, d.points, d.mean, d.stdev, d.ci95, cap.cp, cap.cpk,
                              cap.cpk_ci95, cap.ppm_out, cap.pp, cap.ppk))
    return out


def _last_two_compared(values: np.ndarray, first_index: int, limits_hist: list[StoredLimits],
                       c: CharacteristicConfig, n: int) -> str:
    """The comparison of the last two phases of limits in two sentences ('' with one phase)."""
    from linewatch.engine.phase_compare import compare, sentence, spread_sentence

    loc_chart = chart_names(n, c.effective_dispersion)[0]
    phases = sorted({(r.limits.phase, r.limits.start_index, r.limits.sigma)
                     for r in limits_hist if r.limits.chart == loc_chart})
    if len(phases) < 2:
        return ""
    (pa, sa, sigma_a), (pb, sb, _) = phases[-2], phases[-1]
    a = values[max(0, sa * n - first_index):max(0, sb * n - first_index)]
    b = values[max(0, sb * n - first_index):]
    share = c.practical_share / 100.0
    cmp = compare(a, b, a=f"phase {pa}", b=f"phase {pb}", lsl=c.lsl, usl=c.usl,
                  sigma=sigma_a * np.sqrt(n), practical_share=share)
    return sentence(cmp, unit=c.unit) + " " + spread_sentence(cmp)


RESOLUTION_READINGS = 200  # recent readings that show the gauge's resolution


def characteristic_view(store: Store, alarms: AlarmBook, c: CharacteristicConfig, now: float,
                        points: int = OVERVIEW_POINTS, detail: bool = False,
                        stale_after: float = 600.0,
                        open_now: list[StoredAlarm] | None = None) -> CharacteristicView:
    """One characteristic as the overview (or, with detail, the detail screen) shows it.
    `open_now`: the line's open alarms, when the caller has read them already."""
    from linewatch.engine.summary import capability

    n = c.subgroup_size
    recs = store.history.last_points(c.name, points * (n if n > 1 else 1))
    v = CharacteristicView(name=c.name, unit=c.unit, lsl=c.lsl, usl=c.usl, subgroup_size=n)
    limits_hist = store.history.limits_history(c.name)
    if open_now is None:
        open_now = alarms.alarms()
    open_alarms = [a for a in open_now if a.characteristic == c.name]
    v.open_alarms = len(open_alarms)
    if recs:
        values = np.array([r.value for r in recs])
        first = recs[0].index
        v.points = recs[-1].index + 1
        v.last_value = float(values[-1])
        v.last_row_age = max(0.0, now - recs[-1].received_at)
        v.seconds_per_point = _seconds_per_point(recs, n)
    if recs and is_stepped(c):  # points with their own limits, stored as the engine made them
        from linewatch.present.stepped_view import fill_stepped

        phase_starts = sorted({r.limits.start_index for r in limits_hist if r.limits.phase > 0})
        fill_stepped(store, c, v, points, phase_starts)
        if not c.is_attribute:
            v.recent_mean = float(values.mean())
        v.stale = v.last_row_age is not None and v.last_row_age > stale_after
    elif recs:
        lv, li, dv, di = _plotted(values, first, n, c.effective_dispersion)
        first_plotted = int(min([*li[:1].tolist(), *di[:1].tolist()], default=0))
        # exactly the points at which a rule fired (an alarm also spans the quiet points
        # between the firings of its episodes)
        marks = store.alarms.signals_over(c.name, first_plotted)
        loc_name, disp_name = chart_names(n, c.effective_dispersion)
        v.location = _chart_view(loc_name, lv, li, limits_hist, marks.get(loc_name, {}))
        v.dispersion = _chart_view(disp_name, dv, di, limits_hist, marks.get(disp_name, {}))
        sigma = None
        if v.location.sigma:
            sigma = v.location.sigma * np.sqrt(n)
        v.recent_sigma = sigma
        v.recent_mean = float(values.mean())
        if sigma:
            cap = capability(values, sigma, c.lsl, c.usl)
            v.cpk, v.cpk_lower95 = cap.cpk, cap.cpk_lower95
            margins = [abs(lim - v.recent_mean) / sigma for lim in (c.lsl, c.usl)
                       if lim is not None]
            if margins:
                v.margin_sigma = min(margins)
        if detail:
            v.phases = _phase_stats(values, first, limits_hist, c, n)
            v.phase_comparison = _last_two_compared(values, first, limits_hist, c, n)
            v.recent_values = values[-RECENT_VALUES:].tolist()
        v.stale = v.last_row_age is not None and v.last_row_age > stale_after
    from linewatch.present.figures import reading_decimals

    v.decimals = reading_decimals(c.decimals, c.lsl, c.usl, v.recent_sigma,
                                  [r.value for r in recs[-RESOLUTION_READINGS:]])
    if v.attribute is not None:  # a proportion or rate, not a reading of the gauge
        v.decimals = 4
    v.pending_phase_start = _pending_phase(store, c.name, limits_hist)

    v.limits_refused = store.ingest.limits_refused(c.name)
    if not limits_hist and not v.limits_refused:  # (refused: more points cannot help)
        plotted = len(v.location.values) if is_stepped(c) and v.location else v.points // max(n, 1)
        v.baseline_needed = max(0, (c.baseline or 25) - plotted)
    if detail and not c.is_attribute:  # (a box plot of 0/1 results says nothing)
        from linewatch.present.close_up import with_figures
        from linewatch.present.detector_charts import add_detector_charts

        with_figures(v)
        add_detector_charts(store, c, v, points * max(n, 1))
    # the label follows the condition (the gauge recovered), not the unacknowledged alarm
    v.stuck = any(a.rule == "stuck" and a.active for a in open_alarms)
    v.state = _state(v, open_alarms, bool(limits_hist), now)
    return v


def _pending_phase(store: Store, name: str, limits_hist: list[StoredLimits]) -> int | None:
    """Where a new phase asked for starts, while its limits are not in yet (else None)."""
    newest_phase = max((r.limits.phase for r in limits_hist), default=0)
    return store.requests.waiting_start(name, newest_phase)


def _seconds_per_point(recs: list[StoredPoint], n: int) -> float | None:
    """Mean time between plotted points over the recent readings, from the rows' own time
    stamps when they parse, else from when they were received."""
    from datetime import datetime

    if len(recs) < 2 * n:
        return None
    first, last = recs[0].received_at, recs[-1].received_at
    t0, t1 = recs[0].time, recs[-1].time
    if t0 is not None and t1 is not None:
        with contextlib.suppress(TypeError, ValueError):  # not ISO 8601: keep receive times
            first, last = (datetime.fromisoformat(t0).timestamp(),
                           datetime.fromisoformat(t1).timestamp())
    span = (recs[-1].index - recs[0].index) / n
    return (last - first) / span if span > 0 and last > first else None


def _state(v: CharacteristicView, open_alarms: list[StoredAlarm], has_limits: bool,
           now: float) -> str:
    states = [a.state(now) for a in open_alarms]
    if UNACKNOWLEDGED in states or RETURNED_UNACKNOWLEDGED in states:
        return STATE_ALARM
    if v.stale or v.stuck:
        return STATE_STALE
    if v.limits_refused:
        return STATE_REFUSED
    if ACKNOWLEDGED in states or (v.cpk is not None and v.cpk < 1.0):
        return STATE_WATCH
    if not has_limits:
        return STATE_LEARNING
    return STATE_OK


# what is said of a pattern as a whole (a bounded expansion, names asked for that no file
# holds): shown under the pattern even when it matches files
PATTERN_NOTES = ("bounded", "warning", "found")


def feed_views(store: Store, now: float, stale_after: float) -> list[FeedView]:
    """Health of every followed file, from the ingest state, points and feed events."""
    out = []
    day = now - 86400
    files = store.ingest.files()
    # every event of the day but the rejected rows, which can be many: those are counted and
    # the last few fetched per file below, through the (file, kind, at) index
    events = [FeedEvent(r[1], r[2], r[3]) for r in store.query(
        "SELECT at, kind, file, detail FROM feed_events WHERE at >= ? AND kind != 'rejected' "
        "ORDER BY at, id", (day,))]
    names = list(files) + [e.file for e in events if e.file not in files
                           and e.kind not in ("stuck", "unstuck")
                           and (e.kind in PATTERN_NOTES or not _pattern_found(e.file, files))]
    for path in dict.fromkeys(names):
        mine = [e for e in events if e.file == path]
        fv = FeedView(file=path)
        if path in files:  # lines read so far (header, comments and rejects included)
            fv.rows = max(0, files[path].next_line - 1)
        newest, recent = store.query(
            "SELECT MAX(received_at), (SELECT COUNT(*) FROM points WHERE file = ?1 "
            "AND received_at >= ?2) FROM points WHERE file = ?1", (path, now - RATE_WINDOW))[0]
        fv.rows_per_second = recent / RATE_WINDOW
        fv.last_row_age = None if newest is None else max(0.0, now - newest)
        fv.rotations = sum(1 for e in mine if e.kind in ("rotated", "replaced"))
        fv.truncations = sum(1 for e in mine if e.kind == "truncated")
        fv.rejected = store.query(
            "SELECT COUNT(*) FROM feed_events WHERE file = ? AND kind = 'rejected' AND at >= ?",
            (path, day))[0][0]
        fv.last_rejects = [r[0] for r in reversed(store.query(
            "SELECT detail FROM feed_events WHERE file = ? AND kind = 'rejected' AND at >= ? "
            "ORDER BY at DESC, id DESC LIMIT 5", (path, day)))]
        # a no-header notice is past once the file got a header (a `header` event after it)
        headed = max((k for k, e in enumerate(mine) if e.kind == "header"), default=-1)
        fv.notes = [e.detail for k, e in enumerate(mine)
                    if e.kind in ("warning", "found", "no-header", "skipped", "bounded")
                    and not (e.kind == "no-header" and k < headed)][-3:]
        fv.unread = store.ingest.unread_lines(path)
        fv.rejected += fv.unread
        counts = store.ingest.time_counts(path)
        if counts:
            fv.times_backwards, fv.times_unreadable = counts
        if fv.times_backwards or fv.times_unreadable:
            fv.times_note = times_text(fv.times_backwards, fv.times_unreadable)
        state_events = [e.kind for e in mine if e.kind in
                        ("stale", "resumed", "vanished", "appeared", "unreadable", "readable",
                         "waiting", "skipped", "bounded")]
        latest = state_events[-1] if state_events else "following"
        if latest == "waiting" and "bounded" in state_events:
            latest = "bounded"  # what was left out matters more than "no match yet"
        fv.stale = latest == "stale"
        fv.status = {"stale": "stale", "vanished": "missing", "unreadable": "unreadable",
                     "waiting": "waiting", "skipped": "skipped",
                     "bounded": "bounded"}.get(latest, "following")
        if fv.unread and fv.status == "following":
            fv.status = "no header"  # its lines cannot be read until it has one
        elif fv.status == "following" and any(e.kind == "warning" for e in mine):
            fv.status = "warning"  # read, but worth a look (a column asked for is not there)
        out.append(fv)
    return out


def _pattern_found(name: str, files: Iterable[str]) -> bool:
    """A pattern that was waiting for its file once, and now matches a followed one."""
    return any(ch in name for ch in "*?[") and any(fnmatch.fnmatch(f, name) for f in files)


def build_snapshot(store: Store, alarms: AlarmBook, chars: list[CharacteristicConfig],
                   *, role: str, title: str, version: int, stale_after: float,
                   now: float | None = None) -> LineSnapshot:
    """The whole line at this moment."""
    now = time.time() if now is None else now
    open_now = alarms.alarms()  # read once for every row, not once per characteristic
    views = [characteristic_view(store, alarms, c, now, stale_after=stale_after,
                                 open_now=open_now) for c in chars]
    alarm_views: list[AlarmView] = alarms.views(now=now)  # most urgent first
    flood = alarms.flood()
    return LineSnapshot(version=version, title=title, role=role, characteristics=views,
                        alarms=alarm_views, feeds=feed_views(store, now, stale_after),
                        flood=flood.count if flood else None,
                        flood_since=flood.since if flood else None,
                        flood_window=alarms.flood_window())


__all__ = ["STATE_LEARNING", "build_snapshot", "characteristic_view", "feed_views"]
