"""Live and batch give the same points, limits and firings for subgroups by sample id and by
clock window, in any chunking, a subgroup closed by its timeout included (an invariant: the
live path is the collector, Phase I from the first closed subgroups, and `standard_point` into
`stream.ChartRules`; the batch path is `split_on_gaps`/`window_labels`, `subgroup_stats` and
`evaluate_stepped`)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import NotEnoughData
from linewatch.engine.rulebook import RULES, resolve_rules
from linewatch.engine.stepped import evaluate_stepped, standard_point
from linewatch.engine.stream import ChartLimitsState, ChartRules
from linewatch.engine.subgroup_collector import SubgroupCollector
from linewatch.engine.subgroups import (
    sizes_from_labels,
    split_on_gaps,
    subgroup_stats,
    subgroup_stats_of,
    window_labels,
)
from linewatch.engine.variable_limits import estimate_model, variable_charts

ALL = tuple(resolve_rules(list(RULES)))
BEYOND = tuple(s for s in ALL if s.kind == "beyond")
rows = st.lists(
    st.tuples(st.sampled_from(["A", "B", "C"]), st.floats(-5, 5, allow_nan=False),
              st.integers(0, 500)),
    min_size=1, max_size=150,
)


def _batch(values, run_labels, baseline, dispersion):
    stats = subgroup_stats(values, sizes_from_labels(run_labels))
    model = estimate_model(stats, dispersion, baseline)
    loc, disp = variable_charts(stats, model)
    fired = []
    for series, specs in ((loc, ALL), (disp, BEYOND)):
        for rule, flags in evaluate_stepped(series, specs).items():
            fired += [(series.chart, rule, int(series.indices[i])) for i in np.flatnonzero(flags)]
    return model, loc.values.tolist(), loc.limits.ucl.tolist(), sorted(fired)


def _live(collector, data, cuts, baseline, dispersion):
    groups: list[list[float]] = []
    points = sorted({c % (len(data) + 1) for c in cuts})
    last = 0
    for p in [*points, len(data)]:
        chunk, last = data[last:p], p
        if chunk:
            done = collector.expire(chunk[0][2])
            if done is not None:
                groups.append(done.values)
        groups += [c.values for c in collector.push(chunk)]
    tail = collector.flush()
    if tail is not None:
        groups.append(tail.values)
    # Phase I once `baseline` subgroups have closed, then every subgroup judged as it closes
    stats = subgroup_stats_of(groups)
    model = estimate_model(subgroup_stats_of(groups[:baseline]), dispersion)
    loc_rules = ChartRules(ALL, ChartLimitsState(0.0, 1.0))
    disp_rules = ChartRules(BEYOND, ChartLimitsState(0.0, 1.0, 3.0, -3.0))
    fired, ucl = [], []
    disp_chart = model.charts[1]
    for i, g in enumerate(groups):
        n = np.array([len(g)])
        c, s, u, _ = model.location_steps(n).point(0)
        ucl.append(u)
        fired += [("xbar", r, i) for r in loc_rules.push(standard_point(float(np.mean(g)), c, s))]
        if len(g) >= 2:
            c, s, _, _ = model.dispersion_steps(n).point(0)
            value = float(stats.ranges[i] if dispersion == "range" else stats.sds[i])
            fired += [(disp_chart, r, i) for r in disp_rules.push(standard_point(value, c, s))]
    return model, stats.means.tolist(), ucl, sorted(fired)


@pytest.mark.parametrize("mode", ["id", "window"])
@settings(max_examples=120, deadline=None)
@given(rows, st.lists(st.integers(0, 200), max_size=6), st.integers(2, 8),
       st.sampled_from(["stdev", "range"]))
def test_live_and_batch_agree_for_subgroups_by_id_and_by_window(mode, raw, cuts, baseline,
                                                                 dispersion):
    t = np.cumsum([gap for *_, gap in raw]).astype(float)
    values = np.array([v for _, v, _ in raw])
    if mode == "id":
        labels = [lab for lab, *_ in raw]
        run_labels = split_on_gaps(labels, t, 300.0)
        collector = SubgroupCollector(timeout=300.0)
    else:
        labels = window_labels(t, 900.0).tolist()
        run_labels = np.asarray(labels)
        collector = SubgroupCollector(window=900.0)
    data = [(lab, float(v), float(w), i)
            for i, (lab, v, w) in enumerate(zip(labels, values, t, strict=True))]
    try:
        expected = _batch(values, run_labels, baseline, dispersion)
    except NotEnoughData:
        with pytest.raises(NotEnoughData):
            _live(collector, data, cuts, baseline, dispersion)
        return
    model, means, ucl, fired = _live(collector, data, cuts, baseline, dispersion)
    assert model == expected[0]
    assert means == pytest.approx(expected[1], rel=1e-12, abs=1e-12)
    assert ucl == pytest.approx(expected[2], rel=1e-12)
    assert fired == expected[3]
