"""A live engine reports each firing once, inside the points it judged in that push: a new
phase that reaches back over points judged in the old phase does not report them again."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup


def _setup() -> ChartSetup:
    rules = tuple(resolve_rules(parse_rule_list("nelson"), {}))
    return ChartSetup(name="od", rules=rules, baseline=20)


def _check(out, seen: set) -> None:
    for f in out.firings:
        lo, hi = out.judged[f.chart]
        assert lo <= f.index <= hi, (f, out.judged)
        key = (f.chart, f.rule, f.index)
        assert key not in seen, f"reported twice: {key}"
        seen.add(key)


def test_the_old_phase_s_firing_is_not_reported_again():
    eng = CharacteristicEngine(_setup())
    base = np.tile([10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8], 5)
    base[45] = 14.0  # fires under the first phase's limits
    seen: set = set()
    _check(eng.push(base), seen)
    assert ("individuals", "n1", 45) in seen
    eng.new_baseline(40)  # 10 of the 20 baseline points are already there
    _check(eng.settle(), seen)
    for k in range(6):
        _check(eng.push(base[:5] + 0.01 * k), seen)
    assert eng.limits is not None and eng.phase == 1


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.floats(-3, 3, allow_nan=False), min_size=60, max_size=120),
    st.integers(0, 59),
    st.lists(st.integers(1, 40), min_size=1, max_size=8),
)
def test_any_new_baseline_and_chunking_reports_each_firing_once(values, start, chunks):
    """Any series, any start of the new phase, any chunking after it (invariant test)."""
    eng = CharacteristicEngine(_setup())
    x = np.asarray(values) + np.arange(len(values)) % 7 * 0.01  # never constant
    seen: set = set()
    _check(eng.push(x[:60]), seen)
    eng.new_baseline(start)
    _check(eng.settle(), seen)
    rest, k = x[60:], 0
    sizes = iter(chunks * rest.shape[0])  # the chunk sizes again and again: enough for any rest
    while k < rest.shape[0]:
        size = next(sizes)
        _check(eng.push(rest[k:k + size]), seen)
        k += size
