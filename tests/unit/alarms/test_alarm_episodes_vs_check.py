"""Live alarms against the whole-history definition: for any series, any chunking, any points at
which the engine's state is saved and restored and the alarm book opened afresh (as after a
SIGKILL and restart), the episodes in the audit trail are those of `episodes()` applied to the
firings `check`'s vectorised path finds over the same series (invariant test)."""

from __future__ import annotations

import itertools
import json
import tempfile
from pathlib import Path

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.alarms.book import AlarmBook
from linewatch.engine.batch import analyse_history
from linewatch.engine.episodes import episodes
from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.live_state import restore_engine, save_state
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup
from linewatch.store.db import Store

SETUP = ChartSetup(name="od", rules=tuple(resolve_rules(parse_rule_list("western-electric"), {})),
                   center=10.0, sigma=1.0)  # known limits: check and live judge alike


def _trail_episodes(store: Store, chart: str) -> list[tuple[int, int | None]]:
    """(first firing, last firing or None) of each episode of `chart`, from the audit trail."""
    opened: int | None = None
    out: list[tuple[int, int | None]] = []
    for e in store.audit.entries():
        p = json.loads(e.payload)
        if p.get("chart") != chart:
            continue
        if e.action in ("raised", "re-raised"):
            opened = p.get("first_index", p.get("index"))
        elif e.action == "returned-to-normal":
            assert opened is not None
            out.append((opened, p["last_index"]))
            opened = None
    if opened is not None:
        out.append((opened, None))
    return out


@settings(max_examples=40, deadline=None)
@given(
    st.lists(st.floats(7.0, 13.5, allow_nan=False), min_size=10, max_size=160),
    st.lists(st.integers(1, 50), min_size=1, max_size=10),
    st.integers(1, 10),
)
def test_live_episodes_equal_the_definition_over_check_s_firings(values, chunks, clear_after):
    x = np.asarray(values)
    batch = analyse_history(x, SETUP)
    with tempfile.TemporaryDirectory() as tmp:
        state = None
        k = 0
        sizes = itertools.cycle(chunks)
        while k < x.shape[0]:
            size = next(sizes)
            # a restart before every chunk: the engine from its saved state, a fresh book
            eng = (CharacteristicEngine(SETUP) if state is None
                   else restore_engine(SETUP, state))
            with Store(Path(tmp) / "s") as store:
                book = AlarmBook(store)
                out = eng.push(x[k:k + size])
                fired: dict[str, dict[str, list[int]]] = {}
                for f in out.firings:
                    fired.setdefault(f.chart, {}).setdefault(f.rule, []).append(f.index)
                for chart, (lo, hi) in out.judged.items():
                    book.observe_chart("od", chart, lo, hi, fired.get(chart, {}), now=float(k),
                                       clear_after=clear_after)
            state = json.loads(json.dumps(save_state(eng)))
            k += size
        with Store(Path(tmp) / "s") as store:
            for chart in ("individuals", "moving-range"):
                c = batch.table.charts.index(chart)
                at = batch.table.index[batch.table.chart == c]
                last = x.shape[0] - 1
                want = [(e.first, e.last if e.returned_at is not None else None)
                        for e in episodes(at, last, clear_after)]
                assert _trail_episodes(store, chart) == want, chart
