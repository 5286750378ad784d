"""The file cache of simulated run lengths gives back exactly what the seeded simulation
computed, and a cache file that is not ours is ignored (invariants, no outside figure)."""

from __future__ import annotations

import pytest

from linewatch.engine.budget.power import detection_power
from linewatch.engine.rulebook import parse_rule_list, resolve_detectors, resolve_rules
from linewatch.present import power_cache


@pytest.fixture
def cache_home(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    monkeypatch.setattr(power_cache, "_loaded", None)
    return tmp_path


def test_the_cache_returns_the_simulated_figures_unchanged(cache_home) -> None:
    ids = parse_rule_list("we1,cusum")
    rules, dets = resolve_rules(ids), resolve_detectors(ids)
    shifts = (0.0, 1.0)
    first = power_cache.cached_power(rules, dets, shifts)
    assert power_cache.cache_file().is_file()
    power_cache._loaded = None  # another process: read from the file
    again = power_cache.cached_power(rules, dets, shifts)
    assert again == first == detection_power(rules, dets, shifts)


def test_a_cache_file_that_is_not_ours_is_ignored(cache_home) -> None:
    path = power_cache.cache_file()
    path.parent.mkdir(parents=True)
    path.write_text("[1, 2")
    ids = parse_rule_list("we1,ewma")
    rules, dets = resolve_rules(ids), resolve_detectors(ids)
    assert power_cache.cached_power(rules, dets, (1.0,)) == detection_power(rules, dets, (1.0,))
