"""The shift handover report as Markdown (GitHub-flavoured tables, no HTML inside)."""

from __future__ import annotations

from collections.abc import Callable

from linewatch.domain.clock import clock_time, local_time, short_time
from linewatch.domain.durations import format_span
from linewatch.domain.safe_text import visible
from linewatch.report.build import (
    GUIDANCE_SOURCE,
    LOCATION_CHARTS,
    ShiftReport,
    anchor_sentence,
    episode_list,
    interval,
    num,
    out_of_spec_text,
    performance_rows,
    performance_sentence,
    ppm,
    reading,
    rules_text,
)

# Markdown that text from outside could use: HTML (<script>), links and images ([..](..)),
# code and emphasis, and the pipe that ends a table cell. Each is backslash-escaped, which
# CommonMark defines for any ASCII punctuation, so it shows as itself and does nothing.
_ACTIVE = set("\\`*_[]<>|!&")


def _text(text: object) -> str:
    """Inline-safe text: Markdown and HTML characters escaped, line breaks flattened."""
    flat = str(text).replace("\r", " ").replace("\n", " ")
    return visible("".join("\\" + ch if ch in _ACTIVE else ch for ch in flat))


def _cell(text: object) -> str:
    """Table-safe text (see `_text`; the pipe is among the escaped characters)."""
    return _text(str(text).strip())


def _table(header: list[str], rows: list[list[object]]) -> list[str]:
    out = ["| " + " | ".join(header) + " |", "|" + "---|" * len(header)]
    out += ["| " + " | ".join(_cell(c) for c in row) + " |" for row in rows]
    return out


def _anchor_lines(r: ShiftReport) -> list[str]:
    """The trail's head as an anchor line (its own small section, after the verdict)."""
    if not r.audit_anchor:
        return []
    return [anchor_sentence(), "", f"`{r.audit_anchor}`", ""]


def render_markdown(report: ShiftReport) -> str:
    """The whole report as one Markdown document."""
    r = report

    def at(epoch: float | None) -> str:
        return clock_time(epoch, r.since, r.until)

    def brief(epoch: float | None) -> str:  # in the episode list: the heading gives the offset
        return short_time(epoch, r.since, r.until)

    lines = [
        f"# Shift handover: {local_time(r.since)} to {local_time(r.until)}",
        "",
        f"Made {local_time(r.made_at)} from the store in {_text(r.state_dir)}.",
        "",
    ]
    audit = "intact" if r.audit_ok else "BROKEN"
    lines += [
        f"**Audit trail: {audit}.** {_text(r.audit_message)}. "
        f"Entries written in this period: {r.audit_entries}.",
        "",
    ]
    lines += _anchor_lines(r)
    if r.empty:
        lines += [
            f"Nothing was recorded between {local_time(r.since)} and {local_time(r.until)}: "
            "no measurements, no alarms, no limit changes and no feed events.",
            "",
        ]
        return "\n".join(lines)

    lines += ["## Characteristics", ""]
    rows = []
    for c in r.characteristics:
        unit = f" [{c.unit}]" if c.unit else ""
        d = c.decimals
        spec = (f"{reading(c.lsl, d)} … {reading(c.usl, d)}"
                if c.lsl is not None or c.usl is not None else "")
        rows.append([
            f"{c.name}{unit}", c.n, reading(c.mean, d), num(c.stdev, 4), interval(c.ci95, 6), spec,
            num(c.cp, 3), interval(c.cp_ci95, 3), num(c.cpk, 3), interval(c.cpk_ci95, 3),
            ppm(c.ppm_out), rules_text(c.alarms_by_rule) or "none",
        ])
    lines += _table(
        ["characteristic", "N", "mean", "SD", "95% CI of mean", "spec (LSL … USL)", "Cp",
         "Cp 95% CI", "Cpk", "Cpk 95% CI", "ppm out of spec", "alarms by rule"],
        rows,
    )
    lines += ["", "N counts individual readings received in the period; Cp/Cpk use the chart's "
              "σ within, ppm the overall SD under a normal model.", ""]
    for c in r.characteristics:  # attribute data: the proportion or rate instead of Cpk
        attr = c.attribute
        if attr is not None:
            lines += [f"- {c.name}: {attr['what']} {attr['estimate']:.4g} (exact 95% "
                      f"{attr['lower']:.4g} to {attr['upper']:.4g}), {attr['ppm']:,.0f} ppm, from "
                      f"{attr['events']:,} in {attr['exposure']:,.0f}; {attr['cpk']}"]
    if any(c.attribute for c in r.characteristics):
        lines += [""]

    lines += ["## Alarms", "", r.alarm_tally(), ""]
    if r.alarms:
        lines += ["Grouped per characteristic and chart. First-out: the rule that fired first; "
                  "signals: the points that fired, per rule and in all.", ""]
        lines += _table(
            ["#", "characteristic", "chart", "first-out", "signals by rule", "signals",
             "episodes", "out of spec", "priority", "raised", "state at end",
             "acknowledged by", "acknowledged at", "unacknowledged for", "reason", "note"],
            [
                [a.id, a.characteristic, a.chart, f"{a.rule}: {a.what}", a.counts, a.signals,
                 a.episodes, out_of_spec_text(a), a.priority, at(a.raised_at), a.state,
                 a.acknowledged_by or "—", at(a.acknowledged_at), format_span(a.unacknowledged_for),
                 a.reason, a.note]
                for a in r.alarms
            ],
        )
        lines.append("")
        if r.episodes:
            lines += ["### Episodes", ""]
            for a in r.alarms:
                if r.episodes_of(a.id):
                    lines.append(f"- {_cell(a.label)}: {_cell(episode_list(r, a, brief))}")
            lines.append("")
    lines += _performance_lines(r, at)

    lines += ["## Limits and baselines", ""]
    decimals = {c.name: c.decimals for c in r.characteristics}
    if r.limits:
        lines += _table(
            ["set at", "characteristic", "chart", "phase", "from point", "CL", "UCL", "LCL",
             "kind", "reason", "by"],
            [
                [at(x.at), x.characteristic, x.chart, x.phase, x.start_index,
                 *(reading(v, decimals.get(x.characteristic)) if x.chart in LOCATION_CHARTS
                   else num(v) for v in (x.center, x.ucl, x.lcl)),
                 "new baseline" if x.new_baseline else "limits set", x.reason, x.actor]
                for x in r.limits
            ],
        )
    else:
        lines.append("No limits were set or changed in this period.")
    lines.append("")

    lines += ["## Feed health", ""]
    if r.feed_events:
        lines += _table(
            ["time", "event", "file", "detail"],
            [[at(f.at), f.kind, f.file, f.detail] for f in r.feed_events],
        )
    else:
        lines.append("No feed events in this period.")
    lines.append("")
    return "\n".join(lines)


def _performance_lines(r: ShiftReport, at: Callable[[float | None], str]) -> list[str]:
    """The alarm-performance section: load beside the ISA-18.2 guidance, the most frequent and
    chattering alarms, those still open at the end."""
    p = r.performance
    if p is None:
        return []
    lines = ["## Alarm performance", "", performance_sentence(p), ""]
    lines += _table(["figure", "this period", "ISA-18.2 guidance"],
                    [list(row) for row in performance_rows(p)])
    lines += ["", GUIDANCE_SOURCE, ""]
    if p.most_frequent:
        lines += ["### Most frequent alarms", ""]
        lines += _table(
            ["alarm", "signals by rule", "shown", "share of all shown"],
            [[r.alarm_label(i), a.counts if (a := r.alarm(i)) else "", n,
              f"{100 * n / p.annunciations:.0f}%"] for i, n in p.most_frequent],
        )
        lines.append("")
    if p.floods:
        lines += ["### Floods announced on the screen", ""]
        lines += _table(
            ["started", "ended", "lasted", "most alarms in one window"],
            [[at(f.started), at(f.ended) if f.ended is not None else "no end recorded",
              format_span(f.ended - f.started) if f.ended is not None else "",
              "" if f.peak is None else f.peak] for f in p.floods],
        )
        lines.append("")
    lines += ["### Chattering alarms", ""]
    if p.chattering:
        lines += _table(
            ["alarm", "re-raised in the period", "most re-raises within a minute"],
            [[r.alarm_label(c.alarm_id), c.re_raised, c.most_in_window] for c in p.chattering],
        )
    else:
        lines.append("No alarm was re-raised 3 or more times within a minute.")
    lines += ["", "### Still open at the end", ""]
    if p.open_at_end:
        lines += _table(
            ["alarm", "first raised", "age at the end", "acknowledged"],
            [[r.alarm_label(o.alarm_id), at(o.raised_at), format_span(o.age),
              "yes" if o.acknowledged else "no"] for o in p.open_at_end],
        )
    else:
        lines.append("Every alarm was closed by the end of the period.")
    lines.append("")
    return lines
