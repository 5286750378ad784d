"""The live subgroup collector closes the same subgroups as the batch functions for any
chunking, with clock closes (timeouts, windows) driven by the rows' own time stamps
(an invariant of the two paths)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.engine.subgroup_collector import SubgroupCollector
from linewatch.engine.subgroups import sizes_from_labels, split_on_gaps, window_labels

rows = st.lists(
    st.tuples(st.sampled_from(["S1", "S2", "S3"]), st.one_of(st.none(), st.integers(-5, 5)),
              st.integers(0, 400)),
    max_size=80,
)


def _live(collector: SubgroupCollector, data, cuts, clock: bool) -> list[list[float]]:
    out: list[list[float]] = []
    points = sorted({c % (len(data) + 1) for c in cuts})
    last = 0
    for p in [*points, len(data)]:
        chunk = data[last:p]
        last = p
        if clock and chunk:
            closed = collector.expire(chunk[0][2])  # the timer fires before the chunk is read
            if closed is not None:
                out.append(closed.values)
        out.extend(c.values for c in collector.push(chunk))
    tail = collector.flush()
    if tail is not None:
        out.append(tail.values)
    return out


def _batch(values: list[float | None], run_labels: np.ndarray) -> list[list[float]]:
    groups: list[list[float]] = []
    start = 0
    for size in sizes_from_labels(run_labels).tolist():
        kept = [v for v in values[start:start + size] if v is not None]
        if kept:
            groups.append(kept)
        start += size
    return groups


def _stamped(raw):
    t = np.cumsum([gap for _, _, gap in raw]).astype(float)
    return [(lab, None if v is None else float(v), float(w), i)
            for i, ((lab, v, _), w) in enumerate(zip(raw, t, strict=True))], t


@settings(max_examples=200, deadline=None)
@given(rows, st.lists(st.integers(0, 100), max_size=6), st.integers(30, 300))
def test_by_label_with_timeout_matches_the_batch_for_any_chunking(raw, cuts, timeout):
    data, t = _stamped(raw)
    data = [(lab, 0.0 if v is None else v, w, m) for lab, v, w, m in data]
    live = _live(SubgroupCollector(timeout=float(timeout)), data, cuts, clock=True)
    labels = [lab for lab, *_ in data]
    assert live == _batch([v for _, v, _, _ in data], split_on_gaps(labels, t, timeout))


@settings(max_examples=200, deadline=None)
@given(rows, st.lists(st.integers(0, 100), max_size=6), st.integers(2, 7))
def test_by_count_a_lost_row_leaves_its_own_subgroup_short(raw, cuts, size):
    data, _ = _stamped(raw)
    live = _live(SubgroupCollector(size=size), data, cuts, clock=False)
    positions = np.arange(len(data))
    assert live == _batch([v for _, v, _, _ in data], positions // size)


@settings(max_examples=200, deadline=None)
@given(rows, st.lists(st.integers(0, 100), max_size=6), st.sampled_from([60.0, 900.0]))
def test_by_clock_window_matches_the_batch_for_any_chunking(raw, cuts, width):
    data, t = _stamped(raw)
    labels = window_labels(t, width)
    data = [(float(lab), 0.0 if v is None else v, w, m)
            for (_, v, w, m), lab in zip(data, labels, strict=True)]
    live = _live(SubgroupCollector(window=width), data, cuts, clock=True)
    assert live == _batch([v for _, v, _, _ in data], labels)


def test_a_subgroup_closed_by_its_timeout_is_said_so_and_a_late_row_starts_anew():
    c = SubgroupCollector(timeout=300.0)
    assert c.push([("S7", 1.0, 0.0, None), ("S7", 2.0, 10.0, None)]) == []
    assert c.expire(200.0) is None
    closed = c.expire(311.0)
    assert closed is not None and closed.by_clock and closed.values == [1.0, 2.0]
    c.push([("S7", 3.0, 320.0, None)])
    tail = c.flush()
    assert tail is not None and tail.values == [3.0]


def test_windows_are_aligned_to_the_clock():
    # 10:14:59 and 10:15:00 fall in different quarter hours; offset: the local clock's seconds
    # east of UTC
    t = np.array([10 * 3600 + 899.0, 10 * 3600 + 900.0])
    assert sizes_from_labels(window_labels(t, 900.0)).tolist() == [1, 1]
    assert window_labels(t - 3600, 900.0, offset=3600).tolist() == window_labels(t, 900).tolist()
