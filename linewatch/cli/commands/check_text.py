"""The readable report of `linewatch check` (plain text, no colour, fits 80 columns).

Names, units, file names and reasons come from the logs: each goes through `visible`."""

from __future__ import annotations

from collections import defaultdict
from typing import TYPE_CHECKING

from linewatch.domain.safe_text import visible
from linewatch.domain.words import count
from linewatch.present.figures import fmt_ppm

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis, NotCharted
    from linewatch.cli.commands.check_subgroups import SteppedAnalysis
    from linewatch.domain.records import Rejected
    from linewatch.engine.setup import Firing

MAX_LISTED = 12  # signals listed per rule before "... and N more"


def _f(
    x: float | list[float | None] | tuple[float | None, ...] | None, digits: int = 6
) -> str:
    if x is None:
        return "—"
    if isinstance(x, list | tuple):
        return f"{_f(x[0], digits)} … {_f(x[1], digits)}"
    if abs(x) >= 10**digits and abs(x) < 1e15:  # whole digits, not 1.13e+03
        return f"{x:.0f}"
    return f"{x:.{digits}g}" if abs(x) < 1e5 else f"{x:.6g}"


def _rule_text(analysis: Analysis | SteppedAnalysis, rule_id: str) -> str:
    specs = (*analysis.setup.rules, *analysis.setup.detectors)
    spec = next((s for s in specs if s.id == rule_id), None)
    return spec.describe() if spec else rule_id


def render_text(analyses: list[Analysis | SteppedAnalysis], rejected: list[Rejected],
                several_files: bool, skipped: list[NotCharted] | None = None) -> str:
    """The whole report as one string; each characteristic that could not be charted gets
    one line with the reason."""
    from linewatch.cli.commands.check import Analysis

    out: list[str] = []
    w = out.append
    for a in analyses:
        if not isinstance(a, Analysis):  # limits that step: their own layout
            from linewatch.cli.commands.check_stepped_text import render_stepped

            out += render_stepped(a, several_files)
            continue
        c, res, s = a.config, a.result, a.summary
        unit = f" [{visible(c.unit)}]" if c.unit else ""
        w(f"== {visible(c.name)}{unit}: {s['points']} values, subgroup size {c.subgroup_size}")
        lim = res.limits
        source = "known centre and sigma" if lim.source == "given" else (
            f"Phase I, baseline of {c.baseline or len(res.location)} plotted points")
        if a.phased is not None:
            source = f"of phase 1 of {len(a.phased.phases)}; each phase's below"
        w(f"   limits ({source}); sigma within = {_f(lim.sigma_within)}")
        for chart_lim in (lim.location, lim.dispersion):
            w(f"   {chart_lim.chart:<13} CL {_f(chart_lim.center):>10}  "
              f"UCL {_f(chart_lim.ucl):>10}  LCL {_f(chart_lim.lcl):>10}")
        if res.leftover:
            w(f"   note: the last {res.leftover} values form an incomplete subgroup and are "
              "left out")
        by_rule: dict[tuple[str, str], list[Firing]] = defaultdict(list)
        for f in res.firings:
            by_rule[(f.chart, f.rule)].append(f)
        if not by_rule:
            w("   signals: none")
        for (chart, rule), firings in by_rule.items():
            w(f"   signal {rule} on {chart}: {_rule_text(a, rule)} — "
              f"{count(len(firings), 'point')}")
            for f in firings[:MAX_LISTED]:
                where = f"line {int(a.column.lines[f.row])}"
                if several_files:
                    file = a.column.files[int(a.column.file_index[f.row])]
                    where = f"{visible(file)}:{where[5:]}"
                side = f" ({f.side})" if f.side else ""
                w(f"      point {f.index:>7}  {where:<24} value {_f(f.value)}{side}")
            if len(firings) > MAX_LISTED:
                w(f"      … and {len(firings) - MAX_LISTED} more")
        w(f"   mean {_f(s.get('mean'))}  SD {_f(s.get('stdev'))}  95% CI of mean "
          f"{_f(s.get('ci95'))}")
        w(f"   min {_f(s.get('min'))}  Q1 {_f(s.get('q1'))}  median {_f(s.get('median'))}  "
          f"Q3 {_f(s.get('q3'))}  max {_f(s.get('max'))}  outliers {len(s.get('outliers') or [])}")
        if c.lsl is not None or c.usl is not None:
            w(f"   specs LSL {_f(c.lsl)} USL {_f(c.usl)}: Cp {_f(s.get('cp'), 3)} "
              f"(95% {_f(s.get('cp_ci95'), 3)})  Cpk {_f(s.get('cpk'), 3)} "
              f"(95% {_f(s.get('cpk_ci95'), 3)})")
            w(f"   Pp {_f(s.get('pp'), 3)}  Ppk {_f(s.get('ppk'), 3)}  expected out of spec "
              f"{fmt_ppm(s.get('ppm_out'), '—')} ppm")
        if s.get("trend_slope") is not None:
            w(f"   trend: slope {_f(s.get('trend_slope'))} per point, R² "
              f"{_f(s.get('trend_r2'), 3)}, p {_f(s.get('trend_p'), 3)}")
        if s.get("arl0"):
            how = s.get("arl0_method") or ""
            spread = f" ± {s['arl0_std_error']:.1f}" if s.get("arl0_std_error") else ""
            approx = "≈ " if how.startswith("simulation") else ""
            words = {"markov": "exact Markov chain"}.get(how, how.replace("simulation",
                                                                         "seeded simulation"))
            words = words.replace("markov (", "exact Markov chain, ")
            w(f"   false-alarm budget: in-control ARL {approx}{s['arl0']:.1f}{spread} points "
              f"({words}); about {s['false_alarms_per_1000']:.2f} false alarms per 1,000 points")
        if a.power is not None:
            from linewatch.present.power_view import table_lines

            out.extend(table_lines(a.power))
        if a.phased is not None or a.regression is not None:
            from linewatch.cli.commands.check_text_phases import investigation_lines

            out.extend(investigation_lines(a))
        w("")
    for n in skipped or []:
        w(f"== {n.characteristic}: {n.values} values, not charted: {n.problem}")
    if skipped:
        w("")
    if rejected:
        w(f"rejected rows: {len(rejected)}")
        for r in rejected[:MAX_LISTED]:
            w(f"   {visible(r.file)}:{r.line}: {visible(r.reason)}")
        if len(rejected) > MAX_LISTED:
            w(f"   … and {len(rejected) - MAX_LISTED} more")
    return "\n".join(out) + "\n"
