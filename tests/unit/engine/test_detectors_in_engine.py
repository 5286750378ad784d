"""Detectors inside the two paths: the live engine, fed in any chunking and restored from JSON at
any point, gives the batch path's detector firings (with their sides and plotted values)."""

from __future__ import annotations

import itertools
import json

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import NotEnoughData
from linewatch.engine.batch import analyse_history
from linewatch.engine.detectors.detect import DOWN, UP
from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.live_state import restore_engine, save_state, signature
from linewatch.engine.rulebook import CusumSpec, EwmaSpec, parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup

DETECTORS = (EwmaSpec(0.2, 2.5), CusumSpec(0.5, 3.0, 1.0))
RULES = tuple(resolve_rules(parse_rule_list("western-electric")))


def _chunks(values: list[float], cuts: list[int]) -> list[list[float]]:
    points = sorted({c % (len(values) + 1) for c in cuts} | {0, len(values)})
    return [values[a:b] for a, b in itertools.pairwise(points)]


def _key(f):
    return (f.index, f.chart, f.rule, f.side or "")


values_st = st.lists(st.floats(-5, 5, allow_nan=False), min_size=0, max_size=150)


@pytest.mark.parametrize("vector_min", [1, 4, 10**9], ids=["vectorised", "mixed", "by-point"])
@settings(max_examples=80, deadline=None)
@given(values_st, st.sampled_from([1, 3]), st.integers(2, 12),
       st.lists(st.integers(0, 200), max_size=6), st.booleans())
def test_live_engine_gives_the_batch_detector_firings(vector_min, values, n, baseline, cuts,
                                                      drift):
    if drift:  # a sustained shift half way, so the detectors have something to find
        values = [v + (1.5 if k > len(values) // 2 else 0.0) for k, v in enumerate(values)]
    setup = ChartSetup("x", n, "range", RULES, baseline, detectors=DETECTORS)
    live = CharacteristicEngine(setup, vector_min=vector_min)
    firings = []
    for chunk in _chunks(values, cuts):
        firings.extend(live.push(chunk).firings)
    try:
        hist = analyse_history(np.array(values), setup)
    except NotEnoughData:
        return
    assert sorted(firings, key=_key) == sorted(hist.firings, key=_key)
    for f in firings:
        assert (f.side in (UP, DOWN)) == (f.chart in ("ewma", "cusum"))


@settings(max_examples=60, deadline=None)
@given(values_st, st.sampled_from([1, 3]), st.integers(2, 10),
       st.lists(st.integers(0, 200), max_size=6))
def test_a_restored_engine_continues_the_detectors_exactly(values, n, baseline, cuts):
    values = [v + 0.02 * k for k, v in enumerate(values)]  # a slow drift
    setup = ChartSetup("x", n, "range", RULES, baseline, detectors=DETECTORS)
    straight = CharacteristicEngine(setup, vector_min=4)
    expected = straight.push(values).firings
    got = []
    engine = CharacteristicEngine(setup, vector_min=4)
    for chunk in _chunks(values, cuts):
        got.extend(engine.push(chunk).firings)
        state = json.loads(json.dumps(save_state(engine)))  # only what JSON keeps survives
        engine = restore_engine(setup, state, vector_min=4)
    assert got == expected


def test_a_new_phase_starts_the_detectors_afresh():
    # after a new baseline the statistics start again from the centre (z_0 = 0, C = head start)
    setup = ChartSetup("x", 1, "range", (), 20, detectors=(CusumSpec(0.5, 4.0),))
    engine = CharacteristicEngine(setup, vector_min=10**9)
    rng = np.random.default_rng(4)
    engine.push(rng.standard_normal(20).tolist())
    assert engine.push([3.0] * 10).firings  # a big shift: the CUSUM fires
    engine.new_baseline(engine.next_index)
    out = engine.push((3.0 + rng.standard_normal(20)).tolist())  # the new level is the baseline
    assert out.limits is not None
    assert not [f for f in out.firings if f.chart == "cusum"]


def test_saved_states_without_detectors_keep_their_signature():
    # a store written before detectors existed is resumed, not restarted
    setup = ChartSetup("x", 1, "range", RULES, 20)
    rules = ",".join(f"{r.id}:{r.length}" for r in RULES)
    assert signature(setup) == f"1|range|{rules}|20|None|None"
    with_det = ChartSetup("x", 1, "range", RULES, 20, detectors=DETECTORS)
    assert signature(with_det) != signature(setup)
