"""The shift report of a pass/fail tester: the p chart drawn with each sample's own limits as
steps, and the overall proportion with its exact interval where Cp/Cpk would be (they do not
apply). Limits: p̄ ± 3√(p̄(1 − p̄)/n_i) (Montgomery, p chart); the interval is Clopper–Pearson,
held to scipy.stats.beta here."""

from __future__ import annotations

import re
from pathlib import Path

from scipy import stats

from linewatch.report.as_html import render_html
from linewatch.report.as_markdown import render_markdown
from linewatch.report.build import build_report
from tests.unit.pipeline.test_stepped_collector import FAILS, PASS_FAIL, Station, write_tester_log


def test_a_pass_fail_report_draws_steps_and_gives_the_proportion(tmp_path: Path):
    st = Station(tmp_path, PASS_FAIL, "tester.csv")
    samples = [(40 + k % 3, bad) for k, bad in enumerate(FAILS)] + [(50, 20), (45, 2)]
    write_tester_log(st.log, samples)
    st.poll(now=2_000_000_000.0)
    report = build_report(st.store, 0.0, 2_000_003_600.0, st.plan.config, 2_000_003_600.0)
    md = render_markdown(report)
    closed = samples[:-1]  # the last sample is still open
    events, trials = sum(b for _, b in closed), sum(n for n, _ in closed)
    lo = stats.beta.ppf(0.025, events, trials - events + 1)
    hi = stats.beta.ppf(0.975, events + 1, trials - events)
    line = next(x for x in md.splitlines() if x.startswith("- tester: proportion"))
    assert f"{events / trials:.4g}" in line and f"{lo:.4g}" in line and f"{hi:.4g}" in line
    assert "do not apply" in line
    svg = re.search(r'<svg[^>]*aria-label="tester p chart".*?</svg>', render_html(report), re.S)
    assert svg is not None
    limit = re.search(r'<path d="([^"]*)"[^>]*class="limit"', svg.group(0))
    assert limit is not None
    levels = {y for y in re.findall(r"M[\d.]+,([\d.]+)H", limit.group(1))}
    assert len(levels) >= 3  # sizes 40, 41, 42 and 50: the UCL steps
