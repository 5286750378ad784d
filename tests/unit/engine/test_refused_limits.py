"""A live engine whose Phase I baseline gives no limits (sigma estimated as 0: every value of
the baseline alike; MR-bar = 0, so MR-bar / d2 = 0 — arithmetic) says why once, keeps saying
it after a restart from its saved state, and judges a new baseline afresh."""

from __future__ import annotations

from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.live_state import restore_engine, save_state
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup


def _setup() -> ChartSetup:
    rules = tuple(resolve_rules(parse_rule_list("western-electric"), {}))
    return ChartSetup(name="gap", rules=rules, baseline=20)


def test_a_constant_baseline_is_refused_once_kept_over_a_restart_and_reset_by_a_new_one(
) -> None:
    eng = CharacteristicEngine(_setup())
    out = eng.push([5.0] * 20)
    assert out.limits is None and out.problem and "sigma estimated as 0" in out.problem
    later = eng.push([5.0 + (k % 3) / 100 for k in range(30)])  # varied, but not the baseline
    assert later.limits is None and later.problem is None  # said once
    assert eng.problem == out.problem and eng.baseline_needed == 0
    restored = restore_engine(_setup(), save_state(eng))
    assert restored.problem == out.problem  # a restart does not forget (nor say it again)
    restored.new_baseline(20)  # from the varied points on
    assert restored.problem is None
    settled = restored.settle()
    assert settled.limits is not None and settled.problem is None


def test_readings_after_a_refused_baseline_do_not_grow_the_saved_state() -> None:
    """The refused baseline is fixed: a shift of readings after it changes nothing to wait
    for, so the engine's saved state stays the same size (it is written at every commit)."""
    eng = CharacteristicEngine(_setup())
    eng.push([5.0] * 20)
    before = len(save_state(eng)["waiting"])
    for _ in range(50):
        eng.push([5.0 + (k % 3) / 100 for k in range(200)])
    assert len(save_state(eng)["waiting"]) == before == 20
    assert eng.values_seen == 10_020 and eng.limits is None
