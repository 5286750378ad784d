"""The figure behind the alarm model: one sustained shift is one alarm per chart, not ~100.

A 1.5σ shift held for 300 individuals, charted against known limits (center and σ given) with
the Western Electric rules, goes through the real live engine and the alarm book the way the
collector feeds them (`pipeline.collector.Collector`), in several chunkings.
A trial with the earlier model measured 113 individuals-chart alarms and 19
out-of-spec alarms for such a shift under the old model (one alarm per stretch of one rule); the
old count here comes from that definition applied to this series' own firings. The series is a
seeded normal sample: a behavioural check, not a published value.
"""

from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.engine.episodes import episodes
from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup, Firing
from linewatch.store.db import Store

CENTER, SIGMA = 10.0, 0.1
LSL, USL = CENTER - 3 * SIGMA, CENTER + 3 * SIGMA
SHIFT = 1.5  # in σ


def shifted_series() -> np.ndarray:
    rng = np.random.default_rng(20261203)
    return CENTER + SHIFT * SIGMA + SIGMA * rng.standard_normal(300)


def chunkings(n: int) -> dict[str, list[int]]:
    """Where to cut n values: all at once (the vectorised path), one by one, and uneven."""
    rng = np.random.default_rng(7)
    uneven = sorted(set(rng.integers(1, n, size=25).tolist()))
    return {"whole": [], "one-by-one": list(range(1, n)), "uneven": uneven,
            "by-7": list(range(7, n, 7))}


def run_line(
    state: Path, values: np.ndarray, cuts: list[int], spec: bool
) -> tuple[Store, list[Firing]]:
    """Feed `values` cut at `cuts` through an engine and the alarm book of a new store in
    `state` (returned open: the caller closes it), as the collector does."""
    setup = ChartSetup("od", 1, "range", tuple(resolve_rules(parse_rule_list("western-electric"))),
                       None, CENTER, SIGMA)
    engine = CharacteristicEngine(setup)
    store = Store(state)
    book = AlarmBook(store)
    firings: list[Firing] = []
    bounds = [0, *cuts, len(values)]
    for k, (lo, hi) in enumerate(itertools.pairwise(bounds)):
        chunk = values[lo:hi]
        first = engine.values_seen
        out = engine.push(chunk)
        firings += out.firings
        fired: dict[str, dict[str, list[int]]] = {}
        for f in out.firings:
            fired.setdefault(f.chart, {}).setdefault(f.rule, []).append(f.index)
        for chart, (a, b) in out.judged.items():
            book.observe_chart("od", chart, a, b, fired.get(chart, {}), now=float(k))
        if spec:
            book.observe_spec("od", first, chunk.tolist(), LSL, USL, now=float(k))
    return store, firings


def old_model_alarms(firings: list[Firing]) -> int:
    """One alarm per maximal stretch of consecutive points at which one rule fires."""
    count = 0
    for _key, group in itertools.groupby(sorted((f.chart, f.rule, f.index) for f in firings),
                                         key=lambda t: t[:2]):
        idx = [t[2] for t in group]
        count += 1 + sum(1 for a, b in itertools.pairwise(idx) if b != a + 1)
    return count


@pytest.mark.parametrize("spec", [False, True], ids=["no-spec", "spec-limits"])
def test_a_sustained_shift_is_one_alarm_per_chart_that_fired(spec: bool, tmp_path: Path) -> None:
    values = shifted_series()
    above, below = int((values > USL).sum()), int((values < LSL).sum())
    seen: dict[str, list[tuple[object, ...]]] = {}
    for name, cuts in chunkings(len(values)).items():
        store, firings = run_line(tmp_path / name, values, cuts, spec)
        with store:
            rows = store.alarms.all()
            charts_fired = sorted({f.chart for f in firings})
            control = [a for a in rows if a.kind != "out-of-spec"]
            assert sorted(a.chart for a in control) == charts_fired, name  # one per chart
            for a in control:
                points = [f.index for f in firings if f.chart == a.chart]
                want = episodes(points, len(values) - 1, 8)
                assert (a.signals, a.episodes) == (len(set(points)), len(want)), name
                assert sum(a.rule_counts.values()) == len(points)
            oos = [a for a in rows if a.kind == "out-of-spec"]
            if spec:
                [alarm] = oos
                assert (alarm.above_usl, alarm.below_lsl) == (above, below)
            else:
                assert oos == []
            seen[name] = sorted((a.kind, a.chart, a.rule, a.first_index, a.last_index, a.signals,
                                 a.episodes, a.rules, a.priority) for a in rows)
    # the same alarms whatever the chunking (their ids follow the order they were raised in)
    assert len({tuple(v) for v in seen.values()}) == 1, seen
    # the old model on the same firings: one alarm per rule stretch, dozens of them
    assert "individuals" in charts_fired and above > 1  # the shift did show
    old = old_model_alarms(firings)
    assert old > 20 * len(charts_fired), old
