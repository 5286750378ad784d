"""Which rows of a whole history form each subgroup, for each way of forming them (the batch
twins of `subgroup_collector.SubgroupCollector`): a count of data rows, a sample id (with the
timeout a live tail applies), or a clock window.
"""

from __future__ import annotations

import numpy as np

from linewatch.engine.subgroups import sizes_from_labels, split_on_gaps, window_labels


def sizes_by_position(positions: np.ndarray, size: int, total_rows: int
                      ) -> tuple[np.ndarray, int]:
    """Subgroups of `size` consecutive data rows when only the rows at `positions` (0-based
    among all `total_rows` data rows, increasing) gave a value: a rejected row leaves its own
    subgroup one value short instead of shifting every later one, and a subgroup none of whose
    rows gave a value has no point. Returns the sizes and how many trailing values were left
    out (the last subgroup, when its rows are not all there yet)."""
    pos = np.asarray(positions, dtype=np.int64)
    labels = pos // size
    leftover = 0
    if total_rows % size:
        last = (total_rows - 1) // size
        leftover = int(np.count_nonzero(labels == last))
        labels = labels[: labels.shape[0] - leftover]
    return sizes_from_labels(labels), leftover


def sizes_by_label(labels: np.ndarray | list[str], times: np.ndarray | None = None,
                   timeout: float | None = None) -> np.ndarray:
    """Runs of one sample id; with time stamps and a timeout, also cut where more than
    `timeout` seconds pass between rows (as a live tail closes such a subgroup; a NaN time
    never cuts)."""
    if times is None or timeout is None:
        return sizes_from_labels(labels)
    return sizes_from_labels(split_on_gaps(labels, times, timeout))


def sizes_by_window(times: np.ndarray, width: float, offset: float) -> np.ndarray:
    """Runs of rows whose time stamps fall in one clock window of `width` seconds (aligned to
    the local clock: `offset` seconds east of UTC)."""
    return sizes_from_labels(window_labels(times, width, offset))


def positions_among(kept_lines: np.ndarray, rejected_lines: np.ndarray) -> np.ndarray:
    """The position of each kept row among all data rows (kept and rejected) of one file, by
    line number: what `sizes_by_position` takes."""
    kept = np.asarray(kept_lines, dtype=np.int64)
    rej = np.unique(np.asarray(rejected_lines, dtype=np.int64))
    rej = rej[~np.isin(rej, kept)]
    before: np.ndarray = np.arange(kept.shape[0]) + np.searchsorted(rej, kept)
    return before
