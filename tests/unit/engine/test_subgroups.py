"""Per-subgroup statistics of varying sizes against the standard library's statistics module,
and subgroups by sample id (a change of id closes a subgroup)."""

from __future__ import annotations

import math
import statistics

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.domain.errors import ChartDataError
from linewatch.engine.subgroups import (
    sizes_from_labels,
    subgroup_stats,
    subgroup_stats_of,
    totals_per_subgroup,
)

groups = st.lists(
    st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=1, max_size=25),
    min_size=1, max_size=30,
)


@settings(max_examples=200, deadline=None)
@given(groups)
def test_each_subgroup_matches_the_statistics_module(gs: list[list[float]]):
    s = subgroup_stats_of(gs)
    assert s.sizes.tolist() == [len(g) for g in gs]
    assert s.rows.tolist() == (np.cumsum([len(g) for g in gs]) - 1).tolist()
    for i, g in enumerate(gs):
        assert s.means[i] == pytest.approx(statistics.fmean(g), rel=1e-9, abs=1e-6)
        if len(g) == 1:
            assert math.isnan(s.sds[i]) and math.isnan(s.ranges[i])
            assert i in s.singles.tolist()
        else:
            assert s.sds[i] == pytest.approx(statistics.stdev(g), rel=1e-7, abs=1e-6)
            assert s.ranges[i] == max(g) - min(g)


def test_a_change_of_sample_id_closes_a_subgroup_and_an_id_that_returns_starts_anew():
    labels = ["S001"] * 5 + ["S002"] * 4 + ["S003"] * 5 + ["S001"] * 2
    assert sizes_from_labels(labels).tolist() == [5, 4, 5, 2]
    assert sizes_from_labels([]).tolist() == []


def test_sizes_outside_1_to_25_and_a_wrong_total_are_refused_with_the_subgroup_named():
    with pytest.raises(ChartDataError, match="subgroup 2 has 26 values"):
        subgroup_stats(np.zeros(31), np.array([5, 26]))
    with pytest.raises(ChartDataError, match="add up to 9, not 10"):
        subgroup_stats(np.zeros(10), np.array([5, 4]))


def test_varies_says_whether_the_sizes_differ():
    assert not subgroup_stats(np.arange(10.0), np.array([5, 5])).varies
    assert subgroup_stats(np.arange(9.0), np.array([5, 4])).varies


def test_totals_per_subgroup_count_failures_of_one_row_per_part():
    fails = np.array([False, True, False, True, True, False, False])
    assert totals_per_subgroup(fails, np.array([3, 4])).tolist() == [1.0, 2.0]
    with pytest.raises(ChartDataError):
        totals_per_subgroup(fails, np.array([3, 3]))
