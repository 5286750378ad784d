"""Rows to subgroups over a whole history: a rejected row keeps its place (its subgroup is one
value short, later ones do not shift), and the batch twins agree with the live collector."""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from linewatch.engine.row_groups import positions_among, sizes_by_position
from linewatch.engine.subgroup_collector import SubgroupCollector


def test_a_rejected_row_leaves_only_its_own_subgroup_short():
    kept_lines = np.array([2, 3, 5, 6, 7, 8, 9, 10, 11])  # line 4 rejected, 12 rows in all
    pos = positions_among(kept_lines, np.array([4]))
    assert pos.tolist() == [0, 1, 3, 4, 5, 6, 7, 8, 9]
    sizes, leftover = sizes_by_position(pos, 5, total_rows=10)
    assert sizes.tolist() == [4, 5] and leftover == 0
    sizes, leftover = sizes_by_position(pos[:-1], 5, total_rows=9)  # the last subgroup open
    assert sizes.tolist() == [4] and leftover == 4


@given(st.lists(st.booleans(), min_size=0, max_size=80), st.integers(1, 7))
def test_by_position_agrees_with_the_live_collector(readable, size):
    rows = [(None, 1.0 if ok else None, None, i) for i, ok in enumerate(readable)]
    live = SubgroupCollector(size=size)
    closed = [len(g.values) for g in live.push(rows)]
    pos = np.flatnonzero(np.array(readable, dtype=bool))
    sizes, leftover = sizes_by_position(pos, size, len(readable))
    assert sizes.tolist() == closed
    assert leftover == live.open_count
