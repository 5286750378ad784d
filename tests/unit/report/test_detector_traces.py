"""The shift report charts the EWMA and the CUSUM under the location chart: their statistics
against the plain recursions (Roberts 1959; Page 1954, as in Montgomery's Introduction to
Statistical Quality Control) restarted at the report's first point, flagged where the detector
fired. Test data: known centre 0, σ 1, +1σ from point 100."""

from __future__ import annotations

import time
from pathlib import Path

import numpy as np
import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.feeds.tailer import Tailer
from linewatch.pipeline.collector import Collector
from linewatch.pipeline.plan import Characteristics, WatchPlan
from linewatch.report.as_html import render_html
from linewatch.report.build import build_report
from linewatch.store.db import Store


def test_the_report_draws_each_detector_with_its_firings(tmp_path: Path) -> None:
    rng = np.random.default_rng(5)
    x = np.round(rng.standard_normal(200), 4)
    x[100:] += 1.0
    log = tmp_path / "line.csv"
    log.write_text("part,od\n" + "".join(f"P{i},{v:.4f}\n" for i, v in enumerate(x)))
    config = parse_config(
        f'[[feed]]\npaths = ["{log}"]\n[[characteristic]]\nname = "od"\ncenter = 0.0\n'
        'sigma = 1.0\nrules = "we1,ewma,cusum"\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=config.characteristics,
                     columns=["od"], baseline=20)
    now = time.time()
    with Store(tmp_path / "state") as store:
        tailer = Tailer(plan.feeds, None, store.ingest.files())
        Collector(store, AlarmBook(store, config), plan, Characteristics(plan)).process(
            tailer.poll(), now)
        tailer.close()
        report = build_report(store, 0.0, now + 3600, config, now)
    part = report.characteristics[0]
    ewma, up, down = part.detector_traces
    z, hi, lo, want = 0.0, 0.0, 0.0, []
    for xi in x:
        z = 0.2 * xi + 0.8 * z
        hi, lo = max(0.0, xi - 0.5 + hi), max(0.0, -xi - 0.5 + lo)
        want.append((z, hi, lo))
    assert ewma.values == pytest.approx([w[0] for w in want], abs=1e-9)
    assert up.values == pytest.approx([w[1] for w in want], abs=1e-9)
    assert down.values == pytest.approx([-w[2] for w in want], abs=1e-9)
    assert up.flagged == {i for i, w in enumerate(want) if w[1] > 5.0}
    assert up.flagged and min(up.flagged) >= 100
    assert set(up.ucl) == {5.0} and set(down.lcl) == {-5.0}
    html = render_html(report)
    assert html.count("<svg") == 4  # the location chart and the three detector charts
    assert "CUSUM C⁺" in html and "EWMA" in html
