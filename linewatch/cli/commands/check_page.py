"""`check --format html|markdown`: the analyses handed to the report's analysis page."""

from __future__ import annotations

import time
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis, NotCharted
    from linewatch.cli.commands.check_subgroups import SteppedAnalysis
    from linewatch.cli.options import CheckOptions
    from linewatch.domain.records import Rejected


def render_page(analyses: list[Analysis | SteppedAnalysis], rejected: list[Rejected],
                skipped: list[NotCharted], options: CheckOptions) -> str:
    """The page of every characteristic charted with fixed limits; one charted with limits
    that step (subgroups of varying size, attribute charts) is named with where to find it."""
    from linewatch.cli.commands.check import Analysis
    from linewatch.engine.rulebook import DEFAULT_RULES
    from linewatch.report.analysis_model import AnalysisPage, CharacteristicAnalysis

    chars = []
    stepped = []
    for a in analyses:
        if not isinstance(a, Analysis):
            stepped.append((a.config.name, int(a.summary.get("points") or 0),
                            "charted with limits that step with the subgroup size; the text "
                            "and jsonl formats show it (this page does not draw it yet)"))
            continue
        c = a.config
        chars.append(CharacteristicAnalysis(
            c.name, c.unit, c.lsl, c.usl,
            options.target if options.target is not None else c.target, c.subgroup_size,
            tuple(a.setup.rules), a.column.values, a.result, a.summary, a.phased, a.regression,
            options.chart.rules or ", ".join(c.rules) or DEFAULT_RULES))
    page = AnalysisPage(
        list(options.logs), time.time(), chars,
        stepped + [(n.characteristic, n.values, n.problem) for n in skipped],
        [(r.file, r.line, r.reason) for r in rejected])
    if options.format == "markdown":
        from linewatch.report.analysis_markdown import render_analysis_markdown

        return render_analysis_markdown(page)
    from linewatch.report.analysis_html import render_analysis_html

    return render_analysis_html(page)
