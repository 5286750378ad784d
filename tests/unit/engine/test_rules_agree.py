"""The vectorised and the incremental evaluators agree on any series and any chunking."""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import NotEnoughData
from linewatch.engine.batch import analyse_history
from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.live_state import restore_engine, save_state
from linewatch.engine.rulebook import RULES, resolve_rules
from linewatch.engine.rules import evaluate, run_at_least, run_length, window_count
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stream import ChartLimitsState, ChartRules

# Values on a coarse grid hit the centre line, the zone edges and ties often.
grid_values = st.integers(min_value=-8, max_value=8).map(lambda k: k * 0.5)
series = st.lists(grid_values, min_size=0, max_size=120)
all_specs = list(RULES.values())
lengths = st.fixed_dictionaries(
    {},
    optional={
        "n2": st.integers(2, 12),
        "n3": st.integers(3, 8),
        "n4": st.integers(3, 16),
        "n6": st.integers(4, 7),
        "n7": st.integers(2, 16),
        "n8": st.integers(2, 10),
    },
)


def _chunks(values: list[float], cuts: list[int]) -> list[list[float]]:
    points = sorted({c % (len(values) + 1) for c in cuts})
    out, last = [], 0
    for p in [*points, len(values)]:
        out.append(values[last:p])
        last = p
    return out


@settings(max_examples=300, deadline=None)
@given(series, lengths, st.lists(st.integers(0, 200), max_size=8), st.booleans())
def test_every_rule_fires_at_the_same_points_in_both_evaluators(values, lens, cuts, asym):
    specs = resolve_rules(list(RULES), lens)
    x = np.array(values, dtype=float)
    center, sigma = 0.0, 1.0
    ucl, lcl = (2.25, 0.25) if asym else (None, None)
    expected = {s.id: evaluate(s, x, center, sigma, ucl, lcl) for s in specs}
    live = ChartRules(specs, ChartLimitsState(center, sigma, ucl, lcl))
    got = {s.id: [] for s in specs}
    for chunk in _chunks(values, cuts):
        for v in chunk:
            fired = live.push(v)
            for s in specs:
                got[s.id].append(s.id in fired)
    for s in specs:
        assert got[s.id] == expected[s.id].tolist(), s.id


@settings(max_examples=150, deadline=None)
@given(series, st.lists(st.integers(0, 200), max_size=8))
def test_replaying_the_recent_points_rebuilds_the_state(values, cuts):
    specs = list(all_specs)
    x = np.array(values, dtype=float)
    expected = {s.id: evaluate(s, x, 0.0, 1.0).tolist() for s in specs}
    got = {s.id: [] for s in specs}
    seen: list[float] = []
    for chunk in _chunks(values, cuts):
        live = ChartRules(specs, ChartLimitsState(0.0, 1.0))  # as after a restart
        live.replay(seen)
        for v in chunk:
            fired = live.push(v)
            for s in specs:
                got[s.id].append(s.id in fired)
        seen.extend(chunk)
    assert got == expected


@pytest.mark.parametrize("vector_min", [1, 10**9], ids=["vectorised-chunks", "point-by-point"])
@settings(max_examples=120, deadline=None)
@given(
    st.lists(st.floats(-5, 5, allow_nan=False), min_size=0, max_size=150),
    st.sampled_from([1, 2, 3, 5, 10]),
    st.sampled_from(["range", "stdev"]),
    st.integers(2, 12),
    st.lists(st.integers(0, 200), max_size=6),
)
def test_live_engine_matches_history_for_any_chunking(
    vector_min, values, n, dispersion, baseline, cuts
):
    # the live engine judges large chunks in one vectorised pass and small ones point by point;
    # both must equal the history's verdict
    setup = ChartSetup("x", n, dispersion, tuple(resolve_rules(list(RULES))), baseline)
    live = CharacteristicEngine(setup, vector_min=vector_min)
    firings = []
    limits = None
    judged: dict[str, list[tuple[int, int]]] = {}
    for chunk in _chunks(values, cuts):
        out = live.push(chunk)
        firings.extend(out.firings)
        limits = out.limits or limits
        for chart, span in out.judged.items():
            judged.setdefault(chart, []).append(span)
    # the alarm book is told of every judged point once, in contiguous ranges
    for spans in judged.values():
        for (_, hi), (lo, _) in itertools.pairwise(spans):
            assert lo == hi + 1
        if limits is not None:
            assert spans[-1][1] == live.next_index - 1
    try:
        hist = analyse_history(np.array(values), setup)
    except NotEnoughData:
        # too few points (the live engine has no limits either), or σ̂ = 0 in the baseline,
        # where the live engine keeps collecting instead of stopping
        assert limits is None or limits.sigma_within > 0
        return
    assert limits == hist.limits
    key = lambda f: (f.index, f.chart, f.rule)  # noqa: E731
    assert sorted(firings, key=key) == sorted(hist.firings, key=key)


@settings(max_examples=100, deadline=None)
@given(
    st.lists(st.floats(-5, 5, allow_nan=False), min_size=0, max_size=150),
    st.sampled_from([1, 3, 5]),
    st.integers(2, 10),
    st.lists(st.integers(0, 200), max_size=6),
)
def test_a_saved_and_restored_engine_continues_exactly(values, n, baseline, cuts):
    setup = ChartSetup("x", n, "range", tuple(resolve_rules(list(RULES))), baseline)
    small = 4  # chunks of 4 points or more take the vectorised path: both paths, small chunks
    straight = CharacteristicEngine(setup, vector_min=small)
    expected = straight.push(values).firings
    got = []
    engine = CharacteristicEngine(setup, vector_min=small)
    for chunk in _chunks(values, cuts):
        got.extend(engine.push(chunk).firings)
        # as after a crash: only what went through JSON survives
        state = json.loads(json.dumps(save_state(engine)))
        engine = restore_engine(setup, state, vector_min=small)
    assert got == expected


@settings(max_examples=300, deadline=None)
@given(st.lists(st.booleans(), max_size=80), st.integers(0, 20))
def test_run_and_window_shortcuts_equal_their_plain_definitions(flags, length) -> None:
    """The counting shortcuts the vectorised rules use, against the definitions written out
    point by point: the run of set flags ending at i, and the set flags among the last m."""
    f = np.array(flags, dtype=bool)
    runs = []
    for i in range(len(flags)):
        k = 0
        while k <= i and flags[i - k]:
            k += 1
        runs.append(k)
    assert run_length(f).tolist() == runs
    assert run_at_least(f, length).tolist() == [r >= length for r in runs]
    assert window_count(f, length).tolist() == [
        sum(flags[max(0, i - length + 1) : i + 1]) if length > 0 else 0
        for i in range(len(flags))
    ]
