"""The shift handover report as one self-contained HTML file (inline CSS and SVG, no scripts,
nothing fetched), laid out to read well on screen and printed on A4."""

from __future__ import annotations

from collections.abc import Callable

from linewatch.domain.clock import clock_time, local_time, short_time
from linewatch.domain.durations import format_span
from linewatch.report.build import (
    GUIDANCE_SOURCE,
    LOCATION_CHARTS,
    LimitsChange,
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
from linewatch.report.svg_charts import control_chart_svg, escape

STYLE = """
:root { --ink: #1d2329; --muted: #5b6570; --rule: #c9d0d6; --warn: #b3261e; --ok: #1e6b3a;
        --band: #f3f5f7; }
* { box-sizing: border-box; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif;
       color: var(--ink); margin: 24px auto; max-width: 1100px; padding: 0 16px; }
h1 { font-size: 22px; margin: 0 0 4px; }
h2 { font-size: 17px; margin: 28px 0 8px; border-bottom: 2px solid var(--ink);
     padding-bottom: 2px; }
h3 { font-size: 15px; margin: 18px 0 4px; }
p.meta { color: var(--muted); margin: 0 0 12px; }
.verdict { display: inline-block; padding: 4px 10px; border: 2px solid; font-weight: 600; }
.verdict.ok { color: var(--ok); } .verdict.bad { color: var(--warn); }
table { border-collapse: collapse; width: 100%; margin: 6px 0 10px; font-size: 13px; }
th, td { text-align: left; padding: 3px 6px; border-bottom: 1px solid var(--rule);
         vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.alarms td:nth-child(4) { min-width: 16em; }
ul.episodes { font-size: 12.5px; padding-left: 18px; margin: 4px 0 10px; }
table.performance td:first-child { width: 40%; }
tr.open td:first-child { border-left: 4px solid var(--warn); }
.empty { padding: 12px; background: var(--band); border-left: 4px solid var(--muted); }
.figures { color: var(--muted); font-size: 12px; margin: 0 0 4px; }
svg.chart { width: 100%; height: auto; max-width: 760px; display: block; }
svg .frame { fill: #fff; stroke: var(--rule); }
svg .trace { fill: none; stroke: #4a5560; stroke-width: 1; }
svg .dot { fill: #22303c; }
svg .flag { fill: #fff; stroke: var(--warn); stroke-width: 2; }
svg .center { fill: none; stroke: #1f5f99; stroke-width: 1.2; }
svg .limit { fill: none; stroke: #1f5f99; stroke-width: 1.2; stroke-dasharray: 6 3; }
svg .spec { fill: none; stroke: var(--warn); stroke-width: 1; stroke-dasharray: 2 2; }
svg .label { font: 10px system-ui, sans-serif; fill: var(--muted); }
svg .spec-label { fill: var(--warn); }
.legend { font-size: 12px; color: var(--muted); }
@media print {
  @page { size: A4; margin: 14mm 12mm; }
  body { margin: 0; max-width: none; font-size: 10.5pt; }
  h2 { break-after: avoid; }
  section.char, tr { break-inside: avoid; }
  table { font-size: 9pt; }
  .verdict, th { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
}
"""


def _table(
    header: list[str], rows: list[list[tuple[str, bool]]], row_classes: list[str] | None = None,
    cls: str = "",
) -> str:
    """Rows of (text, numeric) cells; text is escaped here."""
    head = "".join(f"<th>{escape(h)}</th>" for h in header)
    body = []
    for k, row in enumerate(rows):
        cls = f' class="{row_classes[k]}"' if row_classes and row_classes[k] else ""
        cells = "".join(
            f'<td class="n">{escape(t)}</td>' if numeric else f"<td>{escape(t)}</td>"
            for t, numeric in row
        )
        body.append(f"<tr{cls}>{cells}</tr>")
    table = f'<table class="{cls}">' if cls else "<table>"
    return f"{table}<thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _anchor_html(r: ShiftReport) -> list[str]:
    """The trail's head as an anchor line (its own small paragraph, after the verdict)."""
    if not r.audit_anchor:
        return []
    return [f'<p class="meta">{escape(anchor_sentence())}<br><code>{escape(r.audit_anchor)}'
            "</code></p>"]


def render_html(report: ShiftReport) -> str:
    """The whole report as one HTML document."""
    r = report

    def at(epoch: float | None) -> str:  # no line break inside a time
        return clock_time(epoch, r.since, r.until).replace(" ", "\u00a0")

    def brief(epoch: float | None) -> str:  # in the episode list: the heading gives the offset
        return short_time(epoch, r.since, r.until).replace(" ", "\u00a0")

    title = f"Shift handover {local_time(r.since)} to {local_time(r.until)}"
    out = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{escape(title)}</title><style>{STYLE}</style></head><body>",
        f"<h1>Shift handover</h1><p class=\"meta\">{escape(local_time(r.since))} to "
        f"{escape(local_time(r.until))} · made {escape(local_time(r.made_at))} · store "
        f"<code>{escape(r.state_dir)}</code></p>",
    ]
    verdict = "ok" if r.audit_ok else "bad"
    label = "Audit trail intact" if r.audit_ok else "Audit trail BROKEN"
    out.append(
        f'<p><span class="verdict {verdict}">{label}</span> {escape(r.audit_message)}. '
        f"Entries written in this period: {r.audit_entries}.</p>"
    )
    out += _anchor_html(r)
    if r.empty:
        out.append(
            f'<p class="empty">Nothing was recorded between {escape(local_time(r.since))} and '
            f"{escape(local_time(r.until))}: no measurements, no alarms, no limit changes and "
            "no feed events.</p></body></html>"
        )
        return "\n".join(out)

    out.append("<h2>Characteristics</h2>")
    rows = []
    for c in r.characteristics:
        unit = f" [{c.unit}]" if c.unit else ""
        rows.append([
            (c.name + unit, False), (str(c.n), True), (reading(c.mean, c.decimals), True),
            (num(c.stdev, 4), True), (interval(c.ci95, 6), True), (num(c.cp, 3), True),
            (interval(c.cp_ci95, 3), True), (num(c.cpk, 3), True),
            (interval(c.cpk_ci95, 3), True), (ppm(c.ppm_out), True),
            (rules_text(c.alarms_by_rule) or "none", False),
        ])
    out.append(_table(
        ["characteristic", "N", "mean", "SD", "95% CI of mean", "Cp", "Cp 95% CI", "Cpk",
         "Cpk 95% CI", "ppm out", "alarms by rule"], rows,
    ))
    out.append(
        '<p class="legend">Charts: solid line CL, dashed UCL/LCL (a step marks new limits), '
        "dotted red the specification (individuals only); hollow red squares are points inside "
        "an alarm.</p>"
    )
    for c in r.characteristics:
        svg = control_chart_svg(c.trace, c.lsl, c.usl, title=f"{c.name} {c.trace.chart} chart")
        if not svg:
            continue
        spec = ""
        if c.lsl is not None or c.usl is not None:
            spec = (f" · spec {reading(c.lsl, c.decimals)} … {reading(c.usl, c.decimals)} "
                    f"{c.unit}")
        kind = f"X̄ of {c.subgroup_size}" if c.subgroup_size > 1 else "individuals"
        for det in c.detector_traces:  # under the location chart, each its own
            svg += (f'<p class="figures">{escape(det.chart)}: hollow squares where it fired'
                    f"</p>{control_chart_svg(det, title=f'{c.name} {det.chart}')}")
        out.append(
            f'<section class="char"><h3>{escape(c.name)}</h3><p class="figures">{escape(kind)} '
            f"chart · {len(c.trace.values)} points{escape(spec)}</p>{svg}</section>"
        )

    out.append(f"<h2>Alarms</h2><p>{escape(r.alarm_tally())}</p>")
    if r.alarms:
        out.append('<p class="legend">Grouped per characteristic and chart. First-out: the rule '
                   "that fired first; signals: the points that fired, per rule and in all.</p>")
        out.append(_table(
            ["#", "characteristic", "chart", "first-out", "signals by rule", "signals",
             "episodes", "out of spec", "prio", "raised", "state at end", "acknowledged by",
             "acknowledged at", "unacknowledged for", "reason", "note"],
            [
                [(str(a.id), True), (a.characteristic, False), (a.chart, False),
                 (f"{a.rule}: {a.what}", False), (a.counts, False), (str(a.signals), True),
                 (str(a.episodes), True), (out_of_spec_text(a), False),
                 (str(a.priority), True), (at(a.raised_at), False), (a.state, False),
                 (a.acknowledged_by or "—", False), (at(a.acknowledged_at), False),
                 (format_span(a.unacknowledged_for), True),
                 (a.reason, False), (a.note, False)]
                for a in r.alarms
            ],
            ["open" if a.still_unacknowledged else "" for a in r.alarms],
            cls="alarms",
        ))
        if r.episodes:
            items = "".join(
                f"<li><b>{escape(a.label)}</b>: {escape(episode_list(r, a, brief))}</li>"
                for a in r.alarms if r.episodes_of(a.id)
            )
            out.append(f'<h3>Episodes</h3><ul class="episodes">{items}</ul>')
    out += _performance_html(r, at)

    out.append("<h2>Limits and baselines</h2>")
    decimals = {c.name: c.decimals for c in r.characteristics}

    def limit(x: LimitsChange, v: float | None) -> str:
        """A limit on the readings' scale with their decimals; dispersion limits as before."""
        return reading(v, decimals.get(x.characteristic)) if x.chart in LOCATION_CHARTS else num(v)

    if r.limits:
        out.append(_table(
            ["set at", "characteristic", "chart", "phase", "from point", "CL", "UCL", "LCL",
             "kind", "reason", "by"],
            [
                [(at(x.at), False), (x.characteristic, False), (x.chart, False),
                 (str(x.phase), True), (str(x.start_index), True), (limit(x, x.center), True),
                 (limit(x, x.ucl), True), (limit(x, x.lcl), True),
                 ("new baseline" if x.new_baseline else "limits set", False), (x.reason, False),
                 (x.actor, False)]
                for x in r.limits
            ],
        ))
    else:
        out.append('<p class="empty">No limits were set or changed in this period.</p>')

    out.append("<h2>Feed health</h2>")
    if r.feed_events:
        out.append(_table(
            ["time", "event", "file", "detail"],
            [[(at(f.at), False), (f.kind, False), (f.file, False), (f.detail, False)]
             for f in r.feed_events],
        ))
    else:
        out.append('<p class="empty">No feed events in this period.</p>')
    out.append("</body></html>")
    return "\n".join(out)


def _performance_html(r: ShiftReport, at: Callable[[float | None], str]) -> list[str]:
    """The alarm-performance section: load beside the ISA-18.2 guidance, the most frequent and
    chattering alarms, those still open at the end."""
    p = r.performance
    if p is None:
        return []
    out = ["<h2>Alarm performance</h2>", f"<p>{escape(performance_sentence(p))}</p>"]
    out.append(_table(
        ["figure", "this period", "ISA-18.2 guidance"],
        [[(f, False), (v, True), (g, False)] for f, v, g in performance_rows(p)],
        cls="performance",
    ))
    out.append(f'<p class="legend">{escape(GUIDANCE_SOURCE)}</p>')
    if p.most_frequent:
        out.append("<h3>Most frequent alarms</h3>")
        out.append(_table(
            ["alarm", "signals by rule", "shown", "share of all shown"],
            [[(r.alarm_label(i), False), ((a.counts if (a := r.alarm(i)) else ""), False),
              (str(n), True), (f"{100 * n / p.annunciations:.0f}%", True)]
             for i, n in p.most_frequent],
        ))
    if p.floods:
        out.append("<h3>Floods announced on the screen</h3>")
        out.append(_table(
            ["started", "ended", "lasted", "most alarms in one window"],
            [[(at(f.started), False),
              (at(f.ended) if f.ended is not None else "no end recorded", False),
              (format_span(f.ended - f.started) if f.ended is not None else "", True),
              ("" if f.peak is None else str(f.peak), True)] for f in p.floods],
        ))
    out.append("<h3>Chattering alarms</h3>")
    if p.chattering:
        out.append(_table(
            ["alarm", "re-raised in the period", "most re-raises within a minute"],
            [[(r.alarm_label(c.alarm_id), False), (str(c.re_raised), True),
              (str(c.most_in_window), True)] for c in p.chattering],
        ))
    else:
        out.append('<p class="empty">No alarm was re-raised 3 or more times within a '
                   "minute.</p>")
    out.append("<h3>Still open at the end</h3>")
    if p.open_at_end:
        out.append(_table(
            ["alarm", "first raised", "age at the end", "acknowledged"],
            [[(r.alarm_label(o.alarm_id), False), (at(o.raised_at), False),
              (format_span(o.age), True),
              ("yes" if o.acknowledged else "no", False)] for o in p.open_at_end],
        ))
    else:
        out.append('<p class="empty">Every alarm was closed by the end of the period.</p>')
    return out
