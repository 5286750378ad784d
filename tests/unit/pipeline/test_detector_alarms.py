"""A sustained 1σ shift watched with the Western Electric rules, the EWMA and the CUSUM: one
special cause, one alarm. The detectors watch the location statistic, so their firings join
the location chart's alarm (counted per rule in it) instead of raising alarms of their own,
while the signal records still name their own charts.

The series is test data: 300 in-control points with the known centre 0 and σ 1, then a shift
of +1σ that stays. That the CUSUM (k = 0.5, h = 5) and the EWMA (λ = 0.2, L = 2.962) find a
1σ shift in about 10 points is Montgomery's and Lucas & Saccucci's (from memory); 200 points
are plenty.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.feeds.tailer import Tailer
from linewatch.pipeline.collector import Collector
from linewatch.pipeline.plan import Characteristics, WatchPlan
from linewatch.store.db import Store

NOW = 1_000_000.0


def test_a_sustained_shift_raises_one_alarm_on_the_location_chart(tmp_path: Path) -> None:
    rng = np.random.default_rng(7)
    x = rng.standard_normal(500)
    x[300:] += 1.0
    log = tmp_path / "line.csv"
    log.write_text("part,od\n" + "".join(f"P{i},{v:.4f}\n" for i, v in enumerate(x)))
    config = parse_config(
        f'[[feed]]\npaths = ["{log}"]\n[[characteristic]]\nname = "od"\ncenter = 0.0\n'
        'sigma = 1.0\nrules = "we1,ewma,cusum"\nclear_after = 20\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=config.characteristics,
                     columns=["od"], baseline=20)
    store = Store(tmp_path / "state")
    try:
        alarms = AlarmBook(store, config)
        tailer = Tailer(plan.feeds, None, store.ingest.files())
        out = Collector(store, alarms, plan, Characteristics(plan)).process(tailer.poll(), NOW)
        tailer.close()
        charts = {r["chart"] for r in out.records if r.get("type") == "signal"}
        assert {"ewma", "cusum"} <= charts  # the records name the detector's chart
        sides = {r.get("side") for r in out.records
                 if r.get("type") == "signal" and r["chart"] == "cusum"}
        assert "up" in sides and sides <= {"up", "down"}  # the shift is upwards
        limits = {r["chart"]: r for r in out.records if r.get("type") == "limits"}
        assert limits["cusum"]["ucl"] == 5.0 and limits["cusum"]["lcl"] is None  # h·σ, σ = 1
        assert limits["ewma"]["varies"] is True
        every = [r[0] for r in store.query("SELECT chart FROM alarms")]
        assert "ewma" not in every and "cusum" not in every
        rows = store.query("SELECT chart, rules FROM alarms WHERE active = 1 "
                           "AND chart != 'moving-range'")  # (the MR chart may alarm by chance)
        assert len(rows) == 1  # not one per detector
        chart, rules = rows[0]
        assert chart == "individuals"
        assert '"cusum"' in rules and '"ewma"' in rules
        marks = store.alarms.signals_over("od", 0)
        assert set(marks) <= {"individuals", "moving-range"}  # marks sit on the charted points
        assert any("cusum" in r for r in marks["individuals"].values())
        # known limits are on the history from the first point, for the charts to draw
        charts_with_limits = {r.limits.chart for r in store.history.limits_history("od")}
        assert charts_with_limits == {"individuals", "moving-range"}
    finally:
        store.close()
