"""The analysis page of `check --format markdown`: the same sections as the HTML page, with
the charts as inline SVG images (data URIs, nothing fetched) so a Markdown viewer that shows
images shows them, and every figure also in a table or a sentence."""

from __future__ import annotations

import base64

from linewatch.domain.clock import local_time
from linewatch.domain.safe_text import visible
from linewatch.report.analysis_html import cmp_sentences
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
    threshold_note,
)
from linewatch.report.svg_charts import box_plots_svg, control_chart_svg, scatter_fit_svg

SVG_STYLE = (
    "<style>.frame{fill:#fff;stroke:#c9d0d6}.trace{fill:none;stroke:#4a5560}.dot{fill:#22303c}"
    ".flag{fill:#fff;stroke:#b3261e;stroke-width:2}.center{fill:none;stroke:#1f5f99}"
    ".limit{fill:none;stroke:#1f5f99;stroke-dasharray:6 3}"
    ".spec{fill:none;stroke:#b3261e;stroke-dasharray:2 2}.label{font:10px sans-serif;"
    "fill:#5b6570}.zone0{fill:#eef1f4}.zone1{fill:#dfe4e9}.separator{stroke:#22303c;"
    "stroke-dasharray:1 3}.mark{font:bold 10px sans-serif;fill:#b3261e}.box{fill:#e6eaee;"
    "stroke:#22303c}.whisker{fill:none;stroke:#22303c}.median{stroke:#22303c;stroke-width:2.5}"
    ".outlier{fill:#fff;stroke:#b3261e}.band{fill:#d5dbe1}.fit{fill:none;stroke:#1f5f99;"
    "stroke-width:2}.target{fill:none;stroke:#22303c;stroke-dasharray:8 2 2 2}"
    ".fitbox{fill:#fff;stroke:#22303c}.boxtext{font:10.5px monospace}</style>"
)


def _md(text: str) -> str:
    """Outside text made safe for a Markdown table cell or line."""
    return visible(text).replace("|", "\\|").replace("<", "&lt;").replace(">", "&gt;")


def _image(svg: str, alt: str) -> str:
    if not svg:
        return ""
    svg = svg.replace(">", ">" + SVG_STYLE, 1)
    data = base64.b64encode(svg.encode("utf-8")).decode("ascii")
    return f"![{_md(alt)}](data:image/svg+xml;base64,{data})"


def _table(header: list[str], rows: list[list[str]]) -> list[str]:
    out = ["| " + " | ".join(_md(h) for h in header) + " |",
           "|" + "---|" * len(header)]
    out += ["| " + " | ".join(_md(c) for c in row) + " |" for row in rows]
    return out


def _characteristic(c: CharacteristicAnalysis) -> list[str]:
    unit = f" [{c.unit}]" if c.unit else ""
    out = [f"## {_md(c.name + unit)}", ""]
    loc, disp = trace_of(c, True), trace_of(c, False)
    out.append(_image(control_chart_svg(loc, c.lsl, c.usl, zones=True,
                                        separators=separators_of(c, True),
                                        marks=marks_of(c, True)), f"{c.name} {loc.chart}"))
    out.append("")
    for letter, words, rules in legend_of(c):
        out.append(f"- **{letter}**: {_md(words)} — {_md('; '.join(rules))}")
    out.append("")
    out.append(_image(control_chart_svg(disp, separators=separators_of(c, False),
                                        marks=marks_of(c, False)), f"{c.name} {disp.chart}"))
    out.append("")
    boxes = boxes_of(c)
    if boxes:
        out += [_image(box_plots_svg(boxes, c.lsl, c.usl), f"{c.name} box plots"), ""]
    if c.phased is not None:
        out += ["### Phases", ""]
        out += _table(*phase_rows(c))
        out.append("")
        out += _table(*phase_limit_rows(c))
        out.append("")
        if c.phased.comparisons:
            out += ["### Did it change, and does it matter?", ""]
            out += _table(*comparison_rows(c))
            out.append("")
            for cmp in c.phased.comparisons:
                out += [f"- {_md(s)}" for s in cmp_sentences(c, cmp)]
            out += ["", f"_{_md(threshold_note(c))}_", ""]
    r = c.regression
    if r is not None:
        out += [f"### {_md(c.name)} against {_md(r.setting)}", ""]
        if r.fit is not None:
            out.append(_image(scatter_fit_svg(
                r.points[0].tolist(), r.points[1].tolist(), curve_of(r), fit_box_lines(c, r),
                r.setting, c.name, lsl=c.lsl, usl=c.usl, target=c.target),
                f"{c.name} on {r.setting}"))
            out.append("")
            out += [f"    {_md(line)}" for line in fit_box_lines(c, r)]
            out.append("")
        out += [f"- {_md(s)}" for s in regression_sentences(c, r)]
        out.append("")
    out += [_md(power_line(c)), ""]
    return out


def render_analysis_markdown(page: AnalysisPage) -> str:
    title = "Analysis of " + ", ".join(page.logs)
    out = [f"# {_md(title)}", "", f"made {local_time(page.made_at)} by linewatch check", "",
           f"> {CAUTION}", ""]
    for c in page.characteristics:
        out += _characteristic(c)
    for name, values, problem in page.not_charted:
        out += [f"## {_md(name)}", "", f"{values} values, not charted: {_md(problem)}", ""]
    out += ["## Rejected rows", ""]
    if page.rejected:
        out += _table(["file", "line", "why"], [[f, str(n), w] for f, n, w in page.rejected])
    else:
        out.append("Every row was read.")
    return "\n".join(out) + "\n"
