"""The shift handover report as CSV for spreadsheets: one block per section, each with its own
header row, separated by a blank line; the first column names the section. Text from outside
(names, notes, reasons, file names) cannot start a formula in the spreadsheet that opens it."""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Iterable

from linewatch.domain.clock import local_time
from linewatch.report.build import ShiftReport

FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")  # a spreadsheet may run such a cell


def _f(x: float | None) -> str:
    return "" if x is None else repr(float(x))


def _is_number(text: str) -> bool:
    try:
        return math.isfinite(float(text))
    except ValueError:
        return False


def safe_cell(cell: object) -> object:
    """A text cell that a spreadsheet would read as a formula (=, +, -, @, tab, CR first) gets
    a leading single quote, so it is shown as text and never run; a real number such as -0.5
    stays a number."""
    if isinstance(cell, str) and cell.startswith(FORMULA_STARTS) and not _is_number(cell):
        return "'" + cell
    return cell


class _SafeWriter:
    """csv.writer whose every row goes through `safe_cell`."""

    def __init__(self, out: io.StringIO) -> None:
        self._w = csv.writer(out, lineterminator="\n")

    def writerow(self, row: Iterable[object]) -> None:
        self._w.writerow([safe_cell(c) for c in row])
def _i(x: int | None) -> str:
    return "" if x is None else str(x)


def render_csv(report: ShiftReport) -> str:
    """The whole report as CSV text (full precision numbers, local times with offset)."""
    r = report
    out = io.StringIO()
    w = _SafeWriter(out)
    w.writerow(["section", "from", "to", "made", "audit", "audit_message", "audit_entries"])
    w.writerow(["period", local_time(r.since), local_time(r.until), local_time(r.made_at),
                "ok" if r.audit_ok else "broken", r.audit_message, r.audit_entries])
    w.writerow([])
    w.writerow(["section", "anchor"])  # the trail's head, for `audit verify --anchor`
    w.writerow(["audit-anchor", r.audit_anchor])
    w.writerow([])
    w.writerow(["section", "characteristic", "unit", "lsl", "usl", "n", "mean", "sd",
                "ci95_low", "ci95_high", "cp", "cp_ci95_low", "cp_ci95_high", "cpk",
                "cpk_ci95_low", "cpk_ci95_high", "ppm_out", "alarms_by_rule"])
    for c in r.characteristics:
        ci = c.ci95 or (None, None)
        cpi = c.cp_ci95 or (None, None)
        cki = c.cpk_ci95 or (None, None)
        rules = ";".join(f"{k}={v}" for k, v in sorted(c.alarms_by_rule.items()))
        w.writerow(["characteristic", c.name, c.unit, _f(c.lsl), _f(c.usl), c.n, _f(c.mean),
                    _f(c.stdev), _f(ci[0]), _f(ci[1]), _f(c.cp), _f(cpi[0]), _f(cpi[1]),
                    _f(c.cpk), _f(cki[0]), _f(cki[1]), _f(c.ppm_out), rules])
    w.writerow([])
    w.writerow(["section", "id", "raised", "characteristic", "chart", "rule", "what", "priority",
                "state", "acknowledged_by", "acknowledged_at", "unacknowledged_seconds",
                "still_unacknowledged", "reason", "note", "signals", "episodes", "rules",
                "below_lsl", "above_usl", "escalated_at"])
    for a in r.alarms:
        w.writerow(["alarm", a.id, local_time(a.raised_at), a.characteristic, a.chart, a.rule,
                    a.what, a.priority, a.state, a.acknowledged_by,
                    local_time(a.acknowledged_at), round(a.unacknowledged_for, 3),
                    "yes" if a.still_unacknowledged else "no", a.reason, a.note, a.signals,
                    a.episodes, a.counts, _i(a.below_lsl), _i(a.above_usl),
                    local_time(a.escalated_at)])
    w.writerow([])
    w.writerow(["section", "alarm_id", "started", "first_index", "returned", "last_index",
                "shelved"])
    for e in r.episodes:  # every episode of the period, from the audit trail
        w.writerow(["episode", e.alarm_id, local_time(e.started_at), _i(e.first_index),
                    local_time(e.returned_at), _i(e.last_index), "yes" if e.shelved else "no"])
    p = r.performance
    if p is not None:
        w.writerow([])
        w.writerow(["section", "figure", "value", "note"])
        for figure, value, note in (
            ("watched_from", local_time(p.since),
             "the later of the period's start and the store's first record"),
            ("watched_to", local_time(p.end), ""),
            ("alarms_shown", p.annunciations, "raised or re-raised, not shelved"),
            ("alarms_per_10_minutes_mean", _f(p.per_ten_minutes),
             "ISA-18.2 guidance: about 1 very likely acceptable, about 2 the most manageable"),
            ("alarms_per_10_minutes_peak", p.peak_ten_minutes,
             "10-minute windows from watched_from"),
            ("flood_windows", p.flood_windows,
             f"{p.flood_window:g}-second windows with more than {p.flood_alarms} alarms"),
            ("windows", p.windows, "the last may be shorter"),
            ("chattering_alarms", len(p.chattering), "re-raised 3 or more times within 60 s"),
            ("open_at_end", len(p.open_at_end), ""),
            ("acknowledgements", len(p.acknowledge_times), ""),
            ("acknowledge_median_seconds", _f(p.median_to_acknowledge), ""),
            ("acknowledge_longest_seconds", _f(p.longest_to_acknowledge), ""),
        ):
            w.writerow(["performance", figure, value, note])
        w.writerow([])
        w.writerow(["section", "alarm_id", "list", "count", "re_raised", "most_in_a_minute",
                    "raised", "age_seconds", "acknowledged"])
        for alarm_id, n in p.most_frequent:
            w.writerow(["alarm-list", alarm_id, "most-frequent", n, "", "", "", "", ""])
        for chatter in p.chattering:
            w.writerow(["alarm-list", chatter.alarm_id, "chattering", "", chatter.re_raised,
                        chatter.most_in_window, "", "", ""])
        for o in p.open_at_end:
            w.writerow(["alarm-list", o.alarm_id, "open-at-end", "", "", "",
                        local_time(o.raised_at), round(o.age, 3),
                        "yes" if o.acknowledged else "no"])
        w.writerow([])
        w.writerow(["section", "started", "ended", "peak"])  # floods the collector announced
        for flood in p.floods:
            w.writerow(["flood", local_time(flood.started), local_time(flood.ended),
                        _i(flood.peak)])
    w.writerow([])
    w.writerow(["section", "set_at", "characteristic", "chart", "phase", "start_index", "center",
                "ucl", "lcl", "kind", "reason", "by"])
    for x in r.limits:
        w.writerow(["limits", local_time(x.at), x.characteristic, x.chart, x.phase,
                    x.start_index, _f(x.center), _f(x.ucl), _f(x.lcl),
                    "new-baseline" if x.new_baseline else "limits-set", x.reason, x.actor])
    w.writerow([])
    w.writerow(["section", "time", "event", "file", "detail"])
    for f in r.feed_events:
        w.writerow(["feed", local_time(f.at), f.kind, f.file, f.detail])
    return out.getvalue()
