"""The live engine for stepped charts gives the batch path's points, limits and firings for
subgroups by sample id and by clock window, of measured values and of pass/fail results and
counts, in any chunking, with the clock closing subgroups between chunks (a subgroup closed by
its timeout included) and the engine saved to JSON and rebuilt at any chunk boundary.

An invariant between two computations: the batch side is `split_on_gaps`/`window_labels`,
`subgroup_stats` or `totals_per_subgroup` over the whole history and `evaluate_stepped` (numpy);
the live side is `SubgroupCollector`, one subgroup at a time, `standard_point` and the counters
of `stream.ChartRules`.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import ChartDataError, NotEnoughData
from linewatch.engine.attribute_charts import attribute_chart, estimate_attribute
from linewatch.engine.rulebook import RULES, resolve_rules
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stepped import evaluate_stepped
from linewatch.engine.stepped_live import SteppedEngine
from linewatch.engine.stepped_live_state import restore_stepped, save_stepped
from linewatch.engine.subgroups import (
    sizes_from_labels,
    split_on_gaps,
    subgroup_stats,
    totals_per_subgroup,
    window_labels,
)
from linewatch.engine.variable_limits import estimate_model, variable_charts

ALL = tuple(resolve_rules(list(RULES)))
TIMEOUT, WINDOW = 300.0, 900.0
rows = st.lists(
    st.tuples(st.sampled_from(["S1", "S2", "S3"]), st.floats(-5, 5, allow_nan=False),
              st.integers(1, 500)),
    min_size=1, max_size=150,
)
# where to cut the rows into chunks, and at which cuts to save and rebuild the engine
cuts = st.lists(st.tuples(st.integers(0, 200), st.booleans()), max_size=8)


def _setup(mode: str, baseline: int, dispersion: str = "stdev", chart: str | None = None
           ) -> ChartSetup:
    return ChartSetup("x", dispersion=dispersion, rules=ALL, baseline=baseline,
                      subgroups="label" if mode == "id" else "window",
                      window=WINDOW if mode == "window" else None,
                      timeout=TIMEOUT if mode == "id" else None, attribute_chart=chart)


def _sizes(mode: str, labels: list[str], t: np.ndarray) -> np.ndarray:
    if mode == "id":
        return sizes_from_labels(split_on_gaps(labels, t, TIMEOUT))
    return sizes_from_labels(window_labels(t, WINDOW))


def _fired(series_list, specs_of) -> list[tuple[str, str, int, float]]:
    out = []
    for series, specs in zip(series_list, specs_of, strict=True):
        for rule, flags in evaluate_stepped(series, specs).items():
            out += [(series.chart, rule, int(series.indices[i]), float(series.values[i]))
                    for i in np.flatnonzero(flags)]
    return sorted(out)


def _run_live(setup: ChartSetup, data, cut_list, end: float):
    """Feed `data` in chunks; before each chunk the clock (the chunk's first time stamp) may
    close the open subgroup; at marked cuts the engine goes through JSON and is rebuilt. At the
    end the clock passes the timeout or window, closing the last subgroup."""
    eng = SteppedEngine(setup)
    points: dict[tuple[str, int], tuple[float, float, float, float]] = {}
    fired: list[tuple[str, str, int, float]] = []
    problems: list[str] = []
    marks = sorted({(c % (len(data) + 1), restart) for c, restart in cut_list})
    last = 0

    def take(out) -> None:
        for p in out.points:
            if p.center is not None:
                points[(p.chart, p.index)] = (p.value, p.center, p.ucl, p.lcl)
        fired.extend((f.chart, f.rule, f.index, f.value) for f in out.firings)
        if out.problem:
            problems.append(out.problem)

    for cut, restart in [*marks, (len(data), False)]:
        chunk, last = data[last:cut], max(last, cut)
        if chunk:
            take(eng.expire(chunk[0][3]))
            take(eng.push(chunk))
        if restart:
            eng = restore_stepped(setup, json.loads(json.dumps(save_stepped(eng))))
    take(eng.expire(end))
    return points, sorted(fired), problems, eng


@pytest.mark.parametrize("mode", ["id", "window"])
@settings(max_examples=100, deadline=None)
@given(rows, cuts, st.integers(2, 8), st.sampled_from(["stdev", "range"]))
def test_measured_values_live_equal_batch(mode, raw, cut_list, baseline, dispersion):
    t = np.cumsum([gap for *_, gap in raw]).astype(float)
    values = np.array([v for _, v, _ in raw])
    labels = [lab for lab, *_ in raw]
    try:
        stats = subgroup_stats(values, _sizes(mode, labels, t))
    except ChartDataError:
        assume(False)  # a subgroup of more than 25 values: neither path charts it
    setup = _setup(mode, baseline, dispersion)
    data = [(lab, float(v), 1.0, float(w), i)
            for i, (lab, v, w) in enumerate(zip(labels, values, t, strict=True))]
    points, fired, problems, eng = _run_live(setup, data, cut_list, float(t[-1]) + WINDOW + 1)
    if stats.sizes.shape[0] < baseline:
        assert eng.model is None and not points
        return
    try:
        model = estimate_model(stats, dispersion, baseline)
    except NotEnoughData:
        assert problems and not points and eng.model is None
        return
    assert eng.model.center == pytest.approx(model.center, rel=1e-12, abs=1e-12)
    assert eng.model.sigma == pytest.approx(model.sigma, rel=1e-12)
    loc, disp = variable_charts(stats, model)
    expected = {}
    for s in (loc, disp):
        for k in range(len(s)):
            expected[(s.chart, int(s.indices[k]))] = (
                float(s.values[k]), *(float(a[k]) for a in (s.limits.center, s.limits.ucl,
                                                             s.limits.lcl)))
    assert points.keys() == expected.keys()
    for key, got in points.items():
        assert got == pytest.approx(expected[key], rel=1e-9, abs=1e-12)
    beyond = tuple(r for r in ALL if r.kind == "beyond")
    assert [f[:3] for f in fired] == [f[:3] for f in _fired((loc, disp), (ALL, beyond))]


@pytest.mark.parametrize("mode", ["id", "window"])
@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(["S1", "S2"]), st.booleans(), st.integers(1, 400)),
                min_size=1, max_size=200),
       cuts, st.integers(2, 6), st.sampled_from(["p", "laney-p"]))
def test_pass_fail_results_live_equal_batch(mode, raw, cut_list, baseline, chart):
    t = np.cumsum([gap for *_, gap in raw]).astype(float)
    fails = np.array([1.0 if bad else 0.0 for _, bad, _ in raw])
    labels = [lab for lab, *_ in raw]
    sizes = _sizes(mode, labels, t)
    d = totals_per_subgroup(fails, sizes)
    n = sizes.astype(float)
    setup = _setup(mode, baseline, chart=chart)
    data = [(lab, float(f), 1.0, float(w), i)
            for i, (lab, f, w) in enumerate(zip(labels, fails, t, strict=True))]
    points, fired, problems, eng = _run_live(setup, data, cut_list, float(t[-1]) + WINDOW + 1)
    if d.shape[0] < baseline:
        assert eng.model is None and not points
        return
    try:
        model, _ = estimate_attribute(chart, d, n, baseline)
    except NotEnoughData:
        assert problems and not points and eng.model is None
        return
    assert eng.model.center == pytest.approx(model.center, rel=1e-12)
    assert eng.model.sigma_z == pytest.approx(model.sigma_z, rel=1e-9)
    series = attribute_chart(chart, d, n, model)
    expected = {(chart, k): (float(series.values[k]), float(series.limits.center[k]),
                             float(series.limits.ucl[k]), float(series.limits.lcl[k]))
                for k in range(len(series))}
    assert points.keys() == expected.keys()
    for key, got in points.items():
        assert got == pytest.approx(expected[key], rel=1e-9, abs=1e-12)
    assert [f[:3] for f in fired] == [f[:3] for f in _fired((series,), (ALL,))]


@settings(max_examples=80, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 12), st.integers(5, 40)), min_size=1, max_size=120),
       cuts, st.integers(2, 10), st.sampled_from(["u", "c", "laney-u"]))
def test_counts_per_row_live_equal_batch(raw, cut_list, baseline, chart):
    """One row per inspected batch (defects and units): each row its own subgroup."""
    d = np.array([c for c, _ in raw], dtype=float)
    n = np.array([u for _, u in raw], dtype=float)
    setup = ChartSetup("x", rules=ALL, baseline=baseline, attribute_chart=chart)
    data = [(None, float(c), float(u), None, i) for i, (c, u) in enumerate(raw)]
    points, fired, problems, eng = _run_live(setup, data, cut_list, 0.0)
    if d.shape[0] < baseline:
        assert eng.model is None and not points
        return
    try:
        model, _ = estimate_attribute(chart, d, n, baseline)
    except NotEnoughData:
        assert problems and not points
        return
    series = attribute_chart(chart, d, n, model)
    got_values = [points[(chart, k)][0] for k in range(len(series))]
    assert got_values == pytest.approx(series.values.tolist(), rel=1e-12)
    assert [points[(chart, k)][2] for k in range(len(series))] == pytest.approx(
        series.limits.ucl.tolist(), rel=1e-9)
    assert [f[:3] for f in fired] == [f[:3] for f in _fired((series,), (ALL,))]


def test_a_sample_left_open_is_closed_by_the_clock_after_its_timeout():
    """Common practice: the last sample of a run is charted without waiting for the next."""
    setup = _setup("id", baseline=2)
    eng = SteppedEngine(setup)
    rows_ = [("S1", 1.0, 1.0, 0.0, 0), ("S1", 2.0, 1.0, 1.0, 1), ("S2", 1.5, 1.0, 10.0, 2),
             ("S2", 2.5, 1.0, 11.0, 3), ("S3", 1.0, 1.0, 20.0, 4), ("S3", 3.0, 1.0, 21.0, 5)]
    out = eng.push(rows_)
    assert [p.index for p in out.points if p.chart == "xbar" and p.center is not None] == [0, 1]
    assert eng.expire(21.0 + TIMEOUT).points == []  # not more than the timeout yet
    late = eng.expire(21.0 + TIMEOUT + 1)
    assert [(p.chart, p.index, p.value, p.n) for p in late.points if p.chart == "xbar"] == [
        ("xbar", 2, 2.0, 2.0)]


def test_an_np_chart_refuses_a_subgroup_of_another_size_and_goes_on():
    setup = ChartSetup("x", rules=ALL, baseline=3, attribute_chart="np")
    eng = SteppedEngine(setup)
    eng.push([(None, 2.0, 50.0, None, k) for k in range(3)])
    out = eng.push([(None, 2.0, 40.0, None, 3), (None, 1.0, 50.0, None, 4)])
    assert out.problem is not None and "p chart" in out.problem
    assert [p.index for p in out.points] == [3]
