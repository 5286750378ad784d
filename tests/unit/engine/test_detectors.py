"""EWMA and tabular CUSUM: against plain recursions written from the formulas, and the same
statistics and firings in any chunking and after any save/restore point."""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import RuleListError
from linewatch.engine.detectors import cusum, detect, ewma
from linewatch.engine.detectors.detect import DOWN, UP, standardise
from linewatch.engine.rulebook import (
    CusumSpec,
    EwmaSpec,
    parse_rule_list,
    resolve_detectors,
    resolve_rules,
)

# --- plain references, written from the formulas (Roberts 1959; Page 1954; Lucas & Crosier 1982)


def ewma_reference(x: list[float], lam: float, width: float) -> tuple[list[float], list[int]]:
    """z_i = λ·x_i + (1 − λ)·z_{i−1}, z_0 = 0; fires +1/−1 where |z_i| is beyond
    L·√(λ/(2 − λ)·(1 − (1 − λ)^{2i}))."""
    z, stats, fires = 0.0, [], []
    for i, v in enumerate(x, start=1):
        z = lam * v + (1 - lam) * z
        limit = width * math.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * i)))
        stats.append(z)
        fires.append(1 if z > limit else (-1 if z < -limit else 0))
    return stats, fires


def cusum_reference(
    x: list[float], k: float, h: float, start: float
) -> tuple[list[tuple[float, float]], list[tuple[bool, bool]]]:
    """C⁺_i = max(0, x_i − k + C⁺_{i−1}), C⁻_i = max(0, −x_i − k + C⁻_{i−1}), from the head start;
    fires where C > h; no reset after a signal."""
    up = down = start
    stats, fires = [], []
    for v in x:
        up = max(0.0, v - k + up)
        down = max(0.0, -v - k + down)
        stats.append((up, down))
        fires.append((up > h, down > h))
    return stats, fires


def _away_from_limits(stat: np.ndarray, limit: np.ndarray) -> np.ndarray:
    """Points whose statistic is not within rounding of a limit (a firing there is a coin toss
    between two correct float evaluations)."""
    return np.abs(np.abs(stat) - limit) > 1e-9


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize(("lam", "width"), [(0.2, 2.962), (0.1, 2.7), (0.05, 2.6), (0.5, 3.0)])
@pytest.mark.parametrize("shift", [0.0, 0.7])
def test_ewma_matches_the_plain_recursion(seed, lam, width, shift):
    # generated series: in control, then shifted by `shift` σ after 300 points; known limits
    x = np.random.default_rng(seed).standard_normal(3000)
    x[300:] += shift
    trace, _ = ewma.scan(EwmaSpec(lam, width), x)
    ref, fires = ewma_reference(x.tolist(), lam, width)
    np.testing.assert_allclose(trace.statistic, ref, rtol=0, atol=1e-12)
    keep = _away_from_limits(trace.statistic, trace.half_width)
    got = trace.up.astype(int) - trace.down.astype(int)
    assert got[keep].tolist() == np.array(fires)[keep].tolist()
    if shift:
        assert trace.up[300:].any()


@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize(("k", "h", "start"), [(0.5, 5.0, 0.0), (0.5, 4.0, 2.0), (0.25, 8.0, 0.0),
                                               (1.0, 2.5, 1.25)])
@pytest.mark.parametrize("shift", [0.0, -0.8])
def test_cusum_matches_the_plain_recursion(seed, k, h, start, shift):
    x = np.random.default_rng(100 + seed).standard_normal(10_000)  # past two rebasing blocks
    x[500:] += shift
    trace, _ = cusum.scan(CusumSpec(k, h, start), x)
    ref, fires = cusum_reference(x.tolist(), k, h, start)
    ref_a = np.array(ref)
    np.testing.assert_allclose(trace.upper, ref_a[:, 0], rtol=0, atol=1e-9)
    np.testing.assert_allclose(trace.lower, ref_a[:, 1], rtol=0, atol=1e-9)
    fires_a = np.array(fires)
    keep_up = np.abs(trace.upper - h) > 1e-9
    keep_down = np.abs(trace.lower - h) > 1e-9
    assert trace.up[keep_up].tolist() == fires_a[keep_up, 0].tolist()
    assert trace.down[keep_down].tolist() == fires_a[keep_down, 1].tolist()
    if shift:
        assert trace.down[500:].any()


def test_estimated_limits_standardise_with_per_point_sigma():
    # subgroup means of varying size: σ of a mean is σ̂/√n_i; the detectors run on (x̄ − x̿)/σ_i
    rng = np.random.default_rng(7)
    sizes = rng.integers(2, 8, 400)
    means = np.array([rng.normal(10.0, 2.0, n).mean() for n in sizes])
    center, sigma_hat = means.mean(), 2.0  # centre estimated, σ known
    z = standardise(means, center, sigma_hat / np.sqrt(sizes))
    expected = [(m - center) / (sigma_hat / math.sqrt(n))
                for m, n in zip(means, sizes, strict=True)]
    np.testing.assert_allclose(z, expected, rtol=1e-12)
    trace, _ = cusum.scan(CusumSpec(), z)
    ref, _ = cusum_reference(expected, 0.5, 5.0, 0.0)
    np.testing.assert_allclose(trace.upper, [u for u, _ in ref], atol=1e-9)


def test_cusum_keeps_firing_without_reset_and_reports_both_sides():
    # a run far above, then far below: C⁺ decays by itself while C⁻ already exceeds h, so both
    # fire at the same points (from the formulas; no reset after a signal)
    x = np.array([3.0] * 40 + [-3.0] * 4)
    trace, _ = cusum.scan(CusumSpec(0.5, 5.0), x)
    assert trace.up[2:].all() and not trace.up[:2].any()  # 2.5, 5.0 (not beyond), 7.5 …
    firing = detect.firings(CusumSpec(), trace)
    both = [f for f in firing if f.at == 42]
    assert [f.side for f in both] == [UP, DOWN]


def test_head_start_fires_sooner_on_a_shift_at_the_start():
    x = np.full(12, 1.0)  # a 1σ shift from the first point
    plain, _ = cusum.scan(CusumSpec(0.5, 5.0), x)
    fir, _ = cusum.scan(CusumSpec(0.5, 5.0, 2.5), x)
    # from the formulas: C⁺ = 0.5·i without a head start (first above 5 at i = 11), 2.5 + 0.5·i
    # with it (first above 5 at i = 6)
    assert int(np.argmax(plain.up)) == 10
    assert int(np.argmax(fir.up)) == 5


def test_ewma_limits_widen_to_the_asymptotic_limits():
    spec = EwmaSpec(0.2, 3.0)
    half = ewma.half_widths(spec, 0, 200)
    # first point: L·λ (the variance of λ·x_1 is λ²); later: L·√(λ/(2 − λ)) (Roberts 1959)
    assert half[0] == pytest.approx(3.0 * 0.2, rel=1e-12)
    assert half[-1] == pytest.approx(3.0 * math.sqrt(0.2 / 1.8), rel=1e-15)
    assert np.all(np.diff(half) >= 0)
    assert half[-1] == spec.asymptotic_half_width


# --- any chunking, any save/restore point --------------------------------------------------

grid = st.integers(-12, 12).map(lambda k: k * 0.25)  # hits limits and h exactly, often
floats = st.floats(-6, 6, allow_nan=False, allow_infinity=False)
specs = st.one_of(
    st.builds(EwmaSpec, st.sampled_from([0.05, 0.1, 0.2, 0.25, 0.5, 1.0]),
              st.sampled_from([2.5, 2.7, 2.962, 3.0])),
    st.builds(CusumSpec, st.sampled_from([0.0, 0.25, 0.5, 1.0]),
              st.sampled_from([1.0, 4.0, 5.0]), st.sampled_from([0.0, 0.5])),
)


def _pieces(n: int, cuts: list[int]) -> list[tuple[int, int]]:
    points = sorted({c % (n + 1) for c in cuts} | {0, n})
    return list(itertools.pairwise(points))


def _stats(trace: detect.DetectorTrace) -> list[np.ndarray]:
    if isinstance(trace, ewma.EwmaTrace):
        return [trace.statistic, trace.half_width, trace.up, trace.down]
    return [trace.upper, trace.lower, trace.up, trace.down]


def _per_point(trace: detect.DetectorTrace) -> list[tuple[tuple[float, float | None], list[str]]]:
    """(statistic, sides fired) at each point, in the form `statistic_now` and `push_point` give."""
    if isinstance(trace, ewma.EwmaTrace):
        stats: list[tuple[float, float | None]] = [(v, None) for v in trace.statistic.tolist()]
    else:
        stats = list(zip(trace.upper.tolist(), trace.lower.tolist(), strict=True))
    sides = [[s for s, hit in ((UP, u), (DOWN, d)) if hit]
             for u, d in zip(trace.up.tolist(), trace.down.tolist(), strict=True)]
    return list(zip(stats, sides, strict=True))


@settings(max_examples=300, deadline=None)
@given(specs, st.lists(st.one_of(grid, floats), max_size=300),
       st.lists(st.integers(0, 400), max_size=10), st.lists(st.booleans(), max_size=12))
def test_any_chunking_and_restore_point_gives_the_batch_statistics(spec, values, cuts, one_by_one):
    x = np.array(values, dtype=float)
    batch, final = detect.run(spec, x)
    got: list[tuple[tuple[float, float | None], list[str]]] = []
    state = detect.new_state(spec)
    for j, (lo, hi) in enumerate(_pieces(len(values), cuts)):
        # as after a crash: only what went through JSON survives
        state = detect.state_from_json(spec, json.loads(json.dumps(detect.state_to_json(state))))
        if j < len(one_by_one) and one_by_one[j]:  # the live path, point by point
            for v in values[lo:hi]:
                sides = detect.push_point(spec, v, state)
                got.append((detect.statistic_now(state), sides))
        else:  # the vectorised path on this chunk
            trace, state = detect.run(spec, x[lo:hi], state)
            got.extend(_per_point(trace))
    assert got == _per_point(batch)  # bitwise: statistics and sides
    assert state == final


@settings(max_examples=40, deadline=None)
@given(st.sampled_from([EwmaSpec(0.2, 2.962), EwmaSpec(0.05, 2.6), CusumSpec(0.5, 5.0, 2.5)]),
       st.integers(0, 2), st.lists(st.integers(0, 12_000), min_size=1, max_size=4))
def test_chunks_across_block_boundaries_match_the_batch_bitwise(spec, seed, cuts):
    # long series cross the fixed rebasing blocks (EWMA: up to 1024 points, CUSUM: 4096)
    x = np.random.default_rng(seed).standard_normal(12_000) * 1.3 + 0.4
    batch, final = detect.run(spec, x)
    state = detect.new_state(spec)
    got: list[list[np.ndarray]] = []
    for lo, hi in _pieces(x.shape[0], cuts):
        trace, state = detect.run(spec, x[lo:hi], state)
        got.append(_stats(trace))
    for k, whole in enumerate(_stats(batch)):
        joined = np.concatenate([g[k] for g in got])
        assert np.array_equal(joined, whole)
    assert state == final


# --- the rule list ------------------------------------------------------------------------------


def test_detectors_are_rule_ids_beside_the_run_rules():
    ids = parse_rule_list("western-electric,ewma,cusum")
    assert ids == ["we1", "we2", "we3", "we4", "ewma", "cusum"]
    assert [s.id for s in resolve_rules(ids)] == ["we1", "we2", "we3", "we4"]
    assert resolve_detectors(ids) == [EwmaSpec(0.2, 2.962), CusumSpec(0.5, 5.0, 0.0)]


def test_detector_options_are_checked_and_applied():
    got = resolve_detectors(["cusum", "ewma"], {"ewma": {"lambda": 0.1, "width": 2.7},
                                                 "cusum": {"h": 4, "headstart": 2}})
    assert got == [CusumSpec(0.5, 4.0, 2.0), EwmaSpec(0.1, 2.7)]
    for bad, word in [({"ewma": {"lambda": 0.0}}, "lambda"), ({"ewma": {"alpha": 1}}, "alpha"),
                      ({"cusum": {"h": "five"}}, "number"), ({"cusum": {"headstart": 6}}, "below"),
                      ({"n1": {"k": 1}}, "not a detector")]:
        with pytest.raises(RuleListError, match=word):
            resolve_detectors(["ewma", "cusum"], bad)
    with pytest.raises(RuleListError, match="no length"):
        resolve_rules(["ewma"], {"ewma": 3})
