"""`check --format html|markdown`: the analyses handed to the report's analysis page."""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis, NotCharted
    from linewatch.cli.options import CheckOptions
    from linewatch.domain.records import Rejected


def render_page(analyses: list[Analysis], rejected: list[Rejected],
                skipped: list[NotCharted], options: CheckOptions) -> str:
    from linewatch.engine.rulebook import DEFAULT_RULES
    from linewatch.report.analysis_model import AnalysisPage, CharacteristicAnalysis

    chars = []
    for a in analyses:
        c = a.config
        chars.append(CharacteristicAnalysis(
            c.name, c.unit, c.lsl, c.usl,
            options.target if options.target is not None else c.target, c.subgroup_size,
            tuple(a.setup.rules), a.column.values, a.result, a.summary, a.phased, a.regression,
            options.chart.rules or ", ".join(c.rules) or DEFAULT_RULES))
    page = AnalysisPage(
        list(options.logs), time.time(), chars,
        [(n.characteristic, n.values, n.problem) for n in skipped],
        [(r.file, r.line, r.reason) for r in rejected])
    if options.format == "markdown":
        from linewatch.report.analysis_markdown import render_analysis_markdown

        return render_analysis_markdown(page)
    from linewatch.report.analysis_html import render_analysis_html

    return render_analysis_html(page)
