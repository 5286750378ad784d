"""The out-of-spec alarm follows the engine's out-of-spec episodes, whatever the chunking.

The engine (`engine/spec.py`) finds the readings below LSL and above USL of a whole history and
their episodes; the alarm book is fed the same readings in chunks, as the collector reads them.
The audit trail's episodes and the alarm's counts per side must be the engine's.
"""

from __future__ import annotations

import itertools
import json
import tempfile
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.alarms.book import AlarmBook
from linewatch.engine.spec import ABOVE_USL, BELOW_LSL, out_of_spec
from linewatch.store.db import Store

LSL, USL = 9.5, 10.5


@settings(max_examples=60, deadline=None)
@given(
    st.lists(st.sampled_from([9.0, 9.5, 10.0, 10.0, 10.0, 10.5, 11.0]), min_size=1,
             max_size=60),
    st.lists(st.integers(1, 59), max_size=6),
    st.integers(1, 6),
)
def test_the_out_of_spec_alarm_has_the_engines_episodes(values, cuts, clear_after):
    found = out_of_spec(values, LSL, USL)
    want = found.episodes(clear_after)
    bounds = sorted({0, *(c for c in cuts if c < len(values)), len(values)})
    with tempfile.TemporaryDirectory() as tmp, Store(Path(tmp) / "s") as store:
        book = AlarmBook(store)
        for k, (lo, hi) in enumerate(itertools.pairwise(bounds)):
            book.observe_spec("od", lo, values[lo:hi], LSL, USL, now=float(k),
                              clear_after=clear_after)
        trail = [(e.action, json.loads(e.payload)) for e in store.audit.entries()]
        starts = sorted([p["first_index"] for a, p in trail if a == "raised"]
                        + [p["index"] for a, p in trail if a == "re-raised"])
        returns = [p["last_index"] for a, p in trail if a == "returned-to-normal"]
        assert starts == [e.first for e in want]
        assert returns == [e.last for e in want if e.returned_at is not None]
        rows = book.alarms(include_closed=True)
        assert sum(a.episodes for a in rows) == len(want)
        assert sum(a.below_lsl or 0 for a in rows) == found.count(BELOW_LSL)
        assert sum(a.above_usl or 0 for a in rows) == found.count(ABOVE_USL)
