"""The readable report of `check` for a chart whose limits step (subgroups of varying size,
attribute charts): plain text that fits 80 columns. Outside text goes through `visible`."""

from __future__ import annotations

from collections import defaultdict
from typing import TYPE_CHECKING, Any

import numpy as np

from linewatch.cli.commands.check_text import MAX_LISTED, _f, _rule_text
from linewatch.domain.records import CHART_C, CHART_LANEY_P, CHART_LANEY_U
from linewatch.domain.safe_text import visible
from linewatch.domain.words import count
from linewatch.present.figures import fmt_ppm

if TYPE_CHECKING:
    from linewatch.cli.commands.check_subgroups import SteppedAnalysis
    from linewatch.engine.stepped import SteppedSeries

MODELS = {"p": "binomial", "np": "binomial", "u": "Poisson", "c": "Poisson"}


def _span(a: np.ndarray, digits: int = 6) -> str:
    """One figure, or the lowest … highest when it steps."""
    if not a.shape[0]:
        return "—"
    lo, hi = float(np.min(a)), float(np.max(a))
    return _f(lo, digits) if lo == hi else f"{_f(lo, digits)} … {_f(hi, digits)}"


def _limits_lines(s: SteppedSeries) -> list[str]:
    lim = s.limits
    return [f"   {s.chart:<13} CL {_span(lim.center)}",
            f"   {'':<13} UCL {_span(lim.ucl)}  LCL {_span(lim.lcl)}"]


def _pct(x: float) -> str:
    return f"{100 * x:.3g}%"


def render_stepped(a: SteppedAnalysis, several_files: bool) -> list[str]:
    """The lines of one characteristic's section."""
    c, res, s = a.config, a.result, a.summary
    out: list[str] = []
    w = out.append
    unit = f" [{visible(c.unit)}]" if c.unit and not c.is_attribute else ""
    what = "parts" if c.result_column else "rows" if c.is_attribute else "values"
    sizes = a.sizes
    if c.count_column and not c.result_column:
        what = "rows"
    span = f"sizes {_span(sizes)}" if sizes.shape[0] else "no subgroup"
    if c.count_column and c.subgroup_size == 1 and not c.sizes_vary:
        head = f"{s['points']} {what}, one subgroup each"
    else:
        head = f"{s['points']} {what} in {s['subgroups']} subgroups {a.grouping}, {span}"
    w(f"== {visible(c.name)}{unit}: {head}")
    given = res.model.source == "given"
    source = "known centre" + ("" if c.is_attribute else " and sigma") if given else (
        f"Phase I, baseline of {count(res.baseline, 'subgroup')}")
    if c.is_attribute:
        w(f"   {res.charts[0].chart} chart, limits ({source})")
    else:
        sigma = getattr(res.model, "sigma", None)
        w(f"   limits ({source}); sigma within = {_f(sigma)}")
    for series in res.charts:
        out += _limits_lines(series)
    if any(series.limits.varies for series in res.charts):
        w("   limits step with the subgroup size (each point's: --format jsonl --points)")
    singles = res.singles
    if singles.shape[0]:
        shown = ", ".join(str(int(i)) for i in singles[:MAX_LISTED])
        more = "…" if singles.shape[0] > MAX_LISTED else ""
        w(f"   note: {count(int(singles.shape[0]), 'subgroup')} of one value (point "
          f"{shown}{more}): on the {res.charts[0].chart} chart only")
    if a.leftover:
        w(f"   note: the last {a.leftover} values form an incomplete subgroup and are left "
          "out")
    out += _signals(a, several_files)
    if c.is_attribute:
        out += _attribute_figures(a)
    else:
        out += _variable_figures(s, c.lsl, c.usl)
    w("")
    return out


def _signals(a: SteppedAnalysis, several_files: bool) -> list[str]:
    out: list[str] = []
    by_rule: dict[tuple[str, str], list[Any]] = defaultdict(list)
    t = a.result.table
    sizes = {s.chart: dict(zip(s.indices.tolist(), s.sizes.tolist(), strict=True))
             for s in a.result.charts}
    for i, ch, r, row, v in zip(t.index.tolist(), t.chart.tolist(), t.rule.tolist(),
                                t.row.tolist(), t.value.tolist(), strict=True):
        by_rule[(t.charts[ch], t.rules[r])].append((i, row, v))
    if not by_rule:
        out.append("   signals: none")
    for (chart, rule), firings in by_rule.items():
        out.append(f"   signal {rule} on {chart}: {_rule_text(a, rule)} — "
                   f"{count(len(firings), 'point')}")
        for i, row, v in firings[:MAX_LISTED]:
            where = f"line {int(a.column.lines[row])}"
            if several_files:
                file = a.column.files[int(a.column.file_index[row])]
                where = f"{visible(file)}:{where[5:]}"
            n = sizes[chart].get(i)
            out.append(f"      point {i:>7}  {where:<24} value {_f(v)}  n {_f(n)}")
        if len(firings) > MAX_LISTED:
            out.append(f"      … and {len(firings) - MAX_LISTED} more")
    return out


def _variable_figures(s: dict[str, Any], lsl: float | None, usl: float | None) -> list[str]:
    out = [
        f"   mean {_f(s.get('mean'))}  SD {_f(s.get('stdev'))}  95% CI of mean "
        f"{_f(s.get('ci95'))}",
        f"   min {_f(s.get('min'))}  Q1 {_f(s.get('q1'))}  median {_f(s.get('median'))}  "
        f"Q3 {_f(s.get('q3'))}  max {_f(s.get('max'))}",
    ]
    if lsl is not None or usl is not None:
        out.append(f"   specs LSL {_f(lsl)} USL {_f(usl)}: Cp {_f(s.get('cp'), 3)} "
                   f"(95% {_f(s.get('cp_ci95'), 3)})  Cpk {_f(s.get('cpk'), 3)} "
                   f"(95% {_f(s.get('cpk_ci95'), 3)})")
        out.append(f"   Pp {_f(s.get('pp'), 3)}  Ppk {_f(s.get('ppk'), 3)}  expected out of "
                   f"spec {fmt_ppm(s.get('ppm_out'), '—')} ppm")
    if s.get("arl0"):
        approx = "≈ " if str(s.get("arl0_method", "")).startswith("simulation") else ""
        out.append(f"   false-alarm budget: in-control ARL {approx}{s['arl0']:.1f} points; "
                   f"about {s['false_alarms_per_1000']:.2f} per 1,000 points")
    return out


def _attribute_figures(a: SteppedAnalysis) -> list[str]:
    s = a.summary
    chart = s["chart"]
    lo, hi = s["ci95"]
    out = []
    if s["capability"] == "proportion":
        out.append(f"   nonconforming {s['events']} of {s['exposure']:.0f}: "
                   f"{_pct(s['estimate'])} (95% exact {_pct(lo)} … {_pct(hi)}), "
                   f"{fmt_ppm(s['ppm'], '—')} ppm")
    else:
        per = "subgroup" if chart == CHART_C else "unit"
        out.append(f"   defects {s['events']} in {_f(s['exposure'])} {per}s: "
                   f"{_f(s['estimate'], 4)} per {per} (95% exact {_f(lo, 4)} … {_f(hi, 4)})")
        out.append(f"   {fmt_ppm(s['ppm'], '—')} defects per million {per}s")
    out.append("   Cp and Cpk do not apply to attribute data (no spec limits on a proportion)")
    verdict = a.result.verdict
    if verdict is not None and s.get("sigma_z") is not None:
        model = MODELS.get(chart, "binomial" if chart == CHART_LANEY_P else "Poisson")
        if chart in (CHART_LANEY_P, CHART_LANEY_U):
            out.append(f"   Laney sigma_z = {verdict.sigma_z:.2f} widens the limits for the "
                       "variation between subgroups")
        elif verdict.suggests_laney:
            out.append(f"   {verdict.describe(model)}")
            out.append(f"   (sigma_z beyond 1 ± {verdict.band:.2f}, our threshold: "
                       f"--chart laney-{'p' if model == 'binomial' else 'u'})")
        else:
            out.append(f"   {verdict.describe(model)}")
    beyond = s.get("beyond_limits_per_1000")
    if beyond is None:
        out.append("   false-alarm budget: no binomial or Poisson tail applies to a Laney "
                   "chart")
    else:
        out.append(f"   false-alarm budget: {beyond:.2f} per 1,000 points beyond the limits in "
                   "control")
        out.append(f"   ({s['beyond_limits_method']} tail at the centre; the run tests add to "
                   "it, not given)")
    return out
