"""The shift handover report as Markdown (GitHub-flavoured tables, no HTML inside)."""

from __future__ import annotations

from linewatch.report import (
    LOCATION_CHARTS,
    ShiftReport,
    anchor_sentence,
    clock_time,
    interval,
    local_time,
    num,
    ppm,
    reading,
    rules_text,
    span,
)
from linewatch.safe_text import visible

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

    lines += ["## Alarms", "", r.alarm_tally(), ""]
    if r.alarms:
        lines += _table(
            ["#", "raised", "characteristic", "what", "priority", "state at end",
             "acknowledged by", "acknowledged at", "unacknowledged for", "reason", "note"],
            [
                [a.id, at(a.raised_at), a.characteristic, f"{a.rule}: {a.what}",
                 a.priority, a.state, a.acknowledged_by or "—", at(a.acknowledged_at),
                 span(a.unacknowledged_for),
                 a.reason, a.note]
                for a in r.alarms
            ],
        )
        lines.append("")

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
