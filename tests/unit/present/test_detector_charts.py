"""The close-up's EWMA and CUSUM charts, built from a real store that a real collector filled,
against the published recursions written here as plain loops (EWMA: Roberts 1959 with the
exact limits of Lucas & Saccucci 1990; tabular CUSUM: Page 1954, as in Montgomery's
Introduction to Statistical Quality Control). The series is test data: known centre 0, σ 1,
a shift of +1σ from point 150."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.feeds.tailer import Tailer
from linewatch.pipeline.collector import Collector
from linewatch.pipeline.plan import Characteristics, WatchPlan
from linewatch.present.snapshot import characteristic_view
from linewatch.store.db import Store


@pytest.fixture
def detail(tmp_path: Path):
    rng = np.random.default_rng(11)
    x = np.round(rng.standard_normal(300), 4)
    x[150:] += 1.0
    log = tmp_path / "line.csv"
    log.write_text("part,od\n" + "".join(f"P{i},{v:.4f}\n" for i, v in enumerate(x)))
    config = parse_config(
        f'[[feed]]\npaths = ["{log}"]\n[[characteristic]]\nname = "od"\ncenter = 0.0\n'
        'sigma = 1.0\nrules = "we1,ewma,cusum"\newma = { lambda = 0.1, width = 2.7 }\n'
        'cusum = { h = 4 }\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=config.characteristics,
                     columns=["od"], baseline=20)
    store = Store(tmp_path / "state")
    alarms = AlarmBook(store, config)
    tailer = Tailer(plan.feeds, None, store.ingest.files())
    Collector(store, alarms, plan, Characteristics(plan)).process(tailer.poll(), 1e6)
    tailer.close()
    v = characteristic_view(store, alarms, config.characteristics[0], 1e6, points=200,
                            detail=True)
    yield x, v
    store.close()


def test_the_charts_follow_the_plain_recursions_and_mark_the_stored_firings(detail) -> None:
    x, v = detail
    ewma, cusum = v.detectors
    assert (ewma.detector, cusum.detector) == ("ewma", "cusum")
    shown = ewma.indices
    assert shown == v.location.indices == list(range(100, 300))
    z, hi, lo = 0.0, 0.0, 0.0
    want_z, want_hi, want_lo, want_half = [], [], [], []
    for i, xi in enumerate(x, start=1):
        z = 0.1 * xi + 0.9 * z
        hi, lo = max(0.0, xi - 0.5 + hi), max(0.0, -xi - 0.5 + lo)
        want_z.append(z)
        want_hi.append(hi)
        want_lo.append(lo)
        want_half.append(2.7 * math.sqrt(0.1 / 1.9 * (1 - 0.9 ** (2 * i))))
    assert ewma.upper == pytest.approx(want_z[100:], abs=1e-9)
    assert ewma.ucl == pytest.approx(want_half[100:], abs=1e-9)
    assert cusum.upper == pytest.approx(want_hi[100:], abs=1e-9)
    assert cusum.lower == pytest.approx(want_lo[100:], abs=1e-9)
    assert set(cusum.ucl) == {4.0}
    fired_up = [i for i, c in zip(shown, want_hi[100:], strict=True) if c > 4.0]
    assert fired_up and [i for i, m in zip(shown, cusum.upper_marks, strict=True) if m] == fired_up
    fired = [i for i, (s, h) in enumerate(zip(want_z, want_half, strict=True)) if abs(s) > h]
    assert [i for i, m in zip(shown, ewma.upper_marks, strict=True) if m] == [
        i for i in fired if i >= 100]
    assert v.power is not None and v.power.rule_set == "we1,ewma (lambda=0.1 width=2.7),cusum (h=4)"


def test_the_detector_chart_draws_within_its_size(detail) -> None:
    from linewatch.faces.tui.glyphs import UNICODE
    from linewatch.faces.tui.widgets.detector_chart import draw_detector_chart

    _x, v = detail
    for chart in v.detectors:
        for width, height in ((80, 8), (150, 12)):
            lines = draw_detector_chart(chart, width, height, UNICODE).plain.splitlines()
            assert len(lines) == height and all(len(line) <= width for line in lines)
            assert lines[0].startswith(chart.title[:10])
            assert any("D" in line for line in lines[1:])  # the shift's firings are marked
