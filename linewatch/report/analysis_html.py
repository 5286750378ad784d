"""The analysis page of `check --format html`: one self-contained file (inline CSS and SVG, no
scripts, nothing fetched) that prints on A4 and reads in greyscale — per characteristic the
time-ordered chart with zones, phases and marked signals, the dispersion chart, box plots per
phase, the phase table and comparisons, the regression on a setting, the detection power; then
the rejected rows."""

from __future__ import annotations

from linewatch.domain.clock import local_time
from linewatch.report.analysis_model import (
    AnalysisPage,
    CharacteristicAnalysis,
    boxes_of,
    curve_of,
    legend_of,
    marks_of,
    power_line,
    separators_of,
    trace_of,
)
from linewatch.report.analysis_text import (
    CAUTION,
    comparison_rows,
    fit_box_lines,
    phase_limit_rows,
    phase_rows,
    regression_sentences,
    setting_words,
    threshold_note,
)
from linewatch.report.as_html import STYLE as REPORT_STYLE
from linewatch.report.svg_charts import (
    box_plots_svg,
    control_chart_svg,
    escape,
    scatter_fit_svg,
)

STYLE = REPORT_STYLE + """
svg .zone0 { fill: #f5f7f9; } svg .zone1 { fill: #dde3e8; }
svg .separator { stroke: #22303c; stroke-width: 1.2; stroke-dasharray: 1 3; }
svg .mark { font: bold 10px system-ui, sans-serif; fill: var(--warn); }
svg .box { fill: #e6eaee; stroke: #22303c; stroke-width: 1.2; }
svg .whisker { fill: none; stroke: #22303c; stroke-width: 1; }
svg .median { stroke: #22303c; stroke-width: 2.5; }
svg .outlier { fill: #fff; stroke: var(--warn); stroke-width: 1.5; }
svg .band { fill: #d5dbe1; stroke: none; }
svg .fit { fill: none; stroke: #1f5f99; stroke-width: 2; }
svg .target { fill: none; stroke: #22303c; stroke-width: 1; stroke-dasharray: 8 2 2 2; }
svg .fitbox { fill: #fff; stroke: #22303c; stroke-width: 1; }
svg .boxtext { font: 10.5px ui-monospace, monospace; fill: var(--ink); }
p.sentence { margin: 4px 0 6px; }
p.caution { font-size: 12px; color: var(--muted); border-left: 3px solid var(--muted);
            padding-left: 8px; }
dl.legend dt { font-weight: 700; float: left; width: 1.6em; }
dl.legend dd { margin: 0 0 2px 1.8em; }
table.wide { font-size: 12px; }
td.n { white-space: normal; }
@media print { section.figure { break-inside: avoid; } }
"""


def _table(header: list[str], rows: list[list[str]], numeric: set[int] | None = None) -> str:
    """Cells in the columns `numeric` (default: all but the first) are right-aligned."""
    head = "".join(f"<th>{escape(h)}</th>" for h in header)
    nums = set(range(1, len(header))) if numeric is None else numeric
    body = "".join(
        "<tr>" + "".join(f'<td class="n">{escape(t)}</td>' if k in nums
                         else f"<td>{escape(t)}</td>" for k, t in enumerate(row)) + "</tr>"
        for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _legend(c: CharacteristicAnalysis) -> str:
    items = legend_of(c)
    if not items:
        return '<p class="legend">No signal on these charts.</p>'
    rows = "".join(
        f"<dt>{escape(letter)}</dt><dd>{escape(words)} — {escape('; '.join(rules))}</dd>"
        for letter, words, rules in items)
    return (f'<p class="legend">Marks: a hollow square is a point where a rule signalled; the '
            f"letter above it says which kind:</p><dl class=\"legend\">{rows}</dl>")


def _characteristic(c: CharacteristicAnalysis, k: int) -> list[str]:
    unit = f" [{c.unit}]" if c.unit else ""
    out = [f'<section class="char" id="c{k}"><h2>{escape(c.name + unit)}</h2>']
    facts = [f"{c.values.shape[0]} values"]
    facts.append("individuals" if c.subgroup_size == 1 else f"subgroups of {c.subgroup_size}")
    if c.lsl is not None or c.usl is not None:
        facts.append(f"spec {'' if c.lsl is None else f'{c.lsl:g}'} … "
                     f"{'' if c.usl is None else f'{c.usl:g}'}")
    if c.target is not None:
        facts.append(f"target {c.target:g}")
    facts.append(f"rules {c.rule_set}")
    if c.phased is not None:
        facts.append(f"{len(c.phased.phases)} phases, " + (
            "each with its own Phase I limits" if c.phased.mode == "per-phase"
            else "all against the first phase's limits"))
    out.append(f'<p class="meta">{escape(" · ".join(facts))}</p>')
    loc = trace_of(c, True)
    chart_name = "X̄" if c.subgroup_size > 1 else "Individuals"
    out.append(f'<section class="figure"><h3>{escape(chart_name)} chart, in time order</h3>')
    out.append(control_chart_svg(loc, c.lsl, c.usl, title=f"{c.name} {loc.chart} chart",
                                 zones=True, separators=separators_of(c, True),
                                 marks=marks_of(c, True)))
    out.append('<p class="legend">Solid line CL, dashed UCL/LCL (each phase its own), dotted '
               "red the specification; the darker band is 1σ–2σ from the centre, the lighter "
               "band within 1σ; dotted verticals start a new phase.</p>")
    out.append(_legend(c))
    out.append("</section>")
    disp = trace_of(c, False)
    out.append(f'<section class="figure"><h3>{escape(disp.chart.replace("-", " ").capitalize())}'
               " chart</h3>")
    out.append(control_chart_svg(disp, title=f"{c.name} {disp.chart} chart",
                                 separators=separators_of(c, False), marks=marks_of(c, False)))
    out.append("</section>")
    boxes = boxes_of(c)
    if boxes:
        out.append('<section class="figure"><h3>Spread per phase</h3>')
        out.append(box_plots_svg(boxes, c.lsl, c.usl, title=f"{c.name} box plots"))
        out.append('<p class="legend">Box: quartiles and median; whiskers to the last reading '
                   "within 1.5·IQR; hollow circles are readings beyond (outliers); dotted red "
                   "the specification.</p></section>")
    if c.phased is not None:
        header, rows = phase_rows(c)
        out.append(f'<h3 id="phases-{k}">Phases</h3>' + _table(header, rows, set(range(1, 8))))
        header, rows = phase_limit_rows(c)
        out.append(_table(header, rows, set(range(1, 8))))
        if c.phased.comparisons:
            out.append("<h3>Did it change, and does it matter?</h3>")
            header, rows = comparison_rows(c)
            out.append(_table(header, rows, set(range(1, 7))))
            for s in (s for cmp in c.phased.comparisons for s in cmp_sentences(c, cmp)):
                out.append(f'<p class="sentence">{escape(s)}</p>')
            out.append(f'<p class="legend">{escape(threshold_note(c))}</p>')
    r = c.regression
    if r is not None:
        out.append(f'<section class="figure" id="regression-{k}"><h3>{escape(c.name)} against '
                   f"{escape(setting_words(r))}</h3>")
        if r.fit is not None:
            out.append(scatter_fit_svg(
                r.points[0].tolist(), r.points[1].tolist(), curve_of(r), fit_box_lines(c, r),
                r.setting, c.name, title=f"{c.name} on {r.setting}", lsl=c.lsl, usl=c.usl,
                target=c.target))
            out.append('<p class="legend">Dots: the ' + escape(r.of) + "; blue line: the fit; "
                       "grey band: its 95% confidence band (where the mean lies).</p>")
        for s in regression_sentences(c, r):
            out.append(f'<p class="sentence">{escape(s)}</p>')
        out.append("</section>")
    out.append(f'<p class="legend">{escape(power_line(c))}</p>')
    out.append("</section>")
    return out


def cmp_sentences(c: CharacteristicAnalysis, cmp: object) -> list[str]:
    from linewatch.engine.phase_compare import Comparison, sentence, spread_sentence

    assert isinstance(cmp, Comparison)
    return [sentence(cmp, unit=c.unit) + " " + spread_sentence(cmp)]


def render_analysis_html(page: AnalysisPage) -> str:
    """The whole page as one HTML document."""
    title = "Analysis of " + ", ".join(page.logs)
    out = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>{escape(title)}</title><style>{STYLE}</style></head><body>",
        f"<h1>{escape(title)}</h1>",
        f'<p class="meta">made {escape(local_time(page.made_at))} by linewatch check</p>',
        f'<p class="caution">{escape(CAUTION)}</p>',
    ]
    for k, c in enumerate(page.characteristics, start=1):
        out += _characteristic(c, k)
    for name, values, problem in page.not_charted:
        out.append(f"<h2>{escape(name)}</h2><p class=\"empty\">{values} values, not charted: "
                   f"{escape(problem)}</p>")
    out.append("<h2>Rejected rows</h2>")
    if page.rejected:
        out.append(_table(["file", "line", "why"],
                          [[f, str(line), why] for f, line, why in page.rejected], {1}))
    else:
        out.append('<p class="empty">Every row was read.</p>')
    out.append("</body></html>")
    return "\n".join(out)
