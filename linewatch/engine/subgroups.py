"""Statistics of subgroups of varying size: the n, mean, SD and range of each.

A subgroup is a run of consecutive values; the caller decides where one ends (a change of sample
id, a clock window, a count of rows) and passes the sizes. Everything is vectorised over the
whole history with `np.add.reduceat`, so a million rows cost one numpy pass. A subgroup of one
value has a mean but no SD or range (NaN there): it is listed in `singles` for the caller to
report, and the dispersion chart leaves it out.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from linewatch.domain.errors import ChartDataError
from linewatch.engine.constants import MAX_N


@dataclass(frozen=True, slots=True)
class SubgroupStats:
    """Per-subgroup figures, parallel arrays in subgroup order. `rows` is the position of each
    subgroup's last value in the input (a subgroup's line is that of its last row)."""

    sizes: np.ndarray  # int, 1..MAX_N
    means: np.ndarray
    sds: np.ndarray  # sample SD (ddof 1); NaN for a single value
    ranges: np.ndarray  # max − min; NaN for a single value
    rows: np.ndarray

    @property
    def singles(self) -> np.ndarray:
        """Positions of the subgroups of one value (charted for location only)."""
        return np.flatnonzero(self.sizes == 1)

    @property
    def varies(self) -> bool:
        """Whether the sizes differ (the charts then have stepped limits)."""
        return bool(self.sizes.shape[0]) and bool(np.any(self.sizes != self.sizes[0]))


def sizes_from_labels(labels: Sequence[object] | np.ndarray) -> np.ndarray:
    """Sizes of the runs of equal consecutive labels (sample ids): a change of value closes a
    subgroup, so an id that comes back later starts a new one."""
    arr = np.asarray(labels, dtype=object)
    if arr.shape[0] == 0:
        return np.zeros(0, dtype=np.int64)
    change = np.flatnonzero(arr[1:] != arr[:-1]) + 1
    bounds = np.concatenate(([0], change, [arr.shape[0]]))
    sizes: np.ndarray = np.diff(bounds).astype(np.int64)
    return sizes


def subgroup_stats(values: np.ndarray, sizes: np.ndarray) -> SubgroupStats:
    """Mean, SD and range of consecutive subgroups of `sizes` values each (sum(sizes) values)."""
    x = np.asarray(values, dtype=float)
    n = np.asarray(sizes, dtype=np.int64)
    if n.shape[0] and (n.min() < 1 or n.max() > MAX_N):
        bad = int(np.flatnonzero((n < 1) | (n > MAX_N))[0])
        raise ChartDataError(
            f"subgroup {bad + 1} has {int(n[bad])} values; subgroups of 1 to {MAX_N} can be "
            "charted"
        )
    if int(n.sum()) != x.shape[0]:
        raise ChartDataError(f"subgroup sizes add up to {int(n.sum())}, not {x.shape[0]} values")
    if n.shape[0] == 0:
        empty = np.zeros(0)
        return SubgroupStats(n, empty, empty, empty, np.zeros(0, dtype=np.int64))
    starts = np.concatenate(([0], np.cumsum(n)[:-1]))
    means = np.add.reduceat(x, starts) / n
    dev = x - np.repeat(means, n)
    with np.errstate(invalid="ignore", divide="ignore"):
        sds = np.sqrt(np.add.reduceat(dev * dev, starts) / (n - 1))
    ranges = np.maximum.reduceat(x, starts) - np.minimum.reduceat(x, starts)
    single = n == 1
    sds[single] = np.nan
    ranges = np.where(single, np.nan, ranges)
    return SubgroupStats(n, means, sds, ranges, starts + n - 1)


def subgroup_stats_of(groups: Sequence[Sequence[float] | np.ndarray]) -> SubgroupStats:
    """`subgroup_stats` of a list of subgroups given as separate sequences."""
    sizes = np.array([len(g) for g in groups], dtype=np.int64)
    flat = np.concatenate([np.asarray(g, dtype=float) for g in groups]) if groups else np.zeros(0)
    return subgroup_stats(flat, sizes)


def window_labels(times: np.ndarray, width: float, offset: float = 0.0) -> np.ndarray:
    """The clock window each time stamp falls in: floor((t + offset) / width), windows aligned
    to multiples of `width` seconds (`offset`: the local clock's seconds east of UTC, so a
    15-minute or hourly window starts on the wall clock's quarter or hour). Rows of one window
    in a row form one subgroup (`sizes_from_labels`)."""
    if not width > 0:
        raise ValueError(f"a window must be longer than 0 seconds, got {width}")
    labels: np.ndarray = np.floor((np.asarray(times, dtype=float) + offset) / width)
    return labels


def totals_per_subgroup(values: np.ndarray, sizes: np.ndarray) -> np.ndarray:
    """Sum of each subgroup's values: failures of one-row-per-part results (True counts 1), or
    the counts and sizes of several count rows that share a subgroup."""
    n = np.asarray(sizes, dtype=np.int64)
    x = np.asarray(values, dtype=float)
    if int(n.sum()) != x.shape[0]:
        raise ChartDataError(f"subgroup sizes add up to {int(n.sum())}, not {x.shape[0]} values")
    if n.shape[0] == 0:
        return np.zeros(0)
    totals: np.ndarray = np.add.reduceat(x, np.concatenate(([0], np.cumsum(n)[:-1])))
    return totals


def split_on_gaps(labels: Sequence[object] | np.ndarray, times: np.ndarray,
                  timeout: float) -> np.ndarray:
    """Run numbers that change where the label changes or where more than `timeout` seconds
    pass between consecutive rows (the batch twin of a live subgroup closed by its timeout);
    `sizes_from_labels` of them gives the subgroup sizes."""
    arr = np.asarray(labels, dtype=object)
    t = np.asarray(times, dtype=float)
    if arr.shape[0] == 0:
        return np.zeros(0, dtype=np.int64)
    breaks = (arr[1:] != arr[:-1]) | (np.diff(t) > timeout)
    runs: np.ndarray = np.concatenate(([0], np.cumsum(breaks))).astype(np.int64)
    return runs
