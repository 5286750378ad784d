"""Plotted statistics: individuals and moving ranges, or subgroup means with ranges or SDs.

Consecutive measurements form a subgroup of fixed size n; a trailing incomplete subgroup is left
out (and reported by the caller). A moving range takes the index of the later of its two points;
a subgroup's line is that of its last row.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from linewatch.domain.records import (
    CHART_INDIVIDUALS,
    CHART_MOVING_RANGE,
    CHART_RANGE,
    CHART_STDEV,
    CHART_XBAR,
)


def chart_names(subgroup_size: int, dispersion: str) -> tuple[str, str]:
    """(location chart, dispersion chart) for a subgroup size and dispersion statistic."""
    if subgroup_size == 1:
        return CHART_INDIVIDUALS, CHART_MOVING_RANGE
    return CHART_XBAR, CHART_RANGE if dispersion == "range" else CHART_STDEV


@dataclass(slots=True)
class Series:
    """One chart's plotted points: values, their chart indices and source rows (positions)."""

    chart: str
    values: np.ndarray
    indices: np.ndarray
    rows: np.ndarray  # position of the source row (the last one for a subgroup) in the input


def plotted_series(
    values: np.ndarray, subgroup_size: int, dispersion: str
) -> tuple[Series, Series]:
    """Location and dispersion series of a whole history (vectorised)."""
    x = np.asarray(values, dtype=float)
    loc_name, disp_name = chart_names(subgroup_size, dispersion)
    if subgroup_size == 1:
        idx = np.arange(x.shape[0])
        mr = np.abs(np.diff(x))
        return (
            Series(loc_name, x, idx, idx),
            Series(disp_name, mr, idx[1:], idx[1:]),
        )
    n = subgroup_size
    k = x.shape[0] // n
    groups = x[: k * n].reshape(k, n)
    means = groups.mean(axis=1)
    if dispersion == "range":
        disp = groups.max(axis=1) - groups.min(axis=1)
    else:
        disp = groups.std(axis=1, ddof=1)
    idx = np.arange(k)
    rows = idx * n + (n - 1)
    return Series(loc_name, means, idx, rows), Series(disp_name, disp, idx, rows)


def subgroup_stats(group: list[float], dispersion: str) -> tuple[float, float]:
    """Mean and range or SD of one complete subgroup (the live twin of `plotted_series`)."""
    loc, disp = plotted_series(np.asarray(group, dtype=float), len(group), dispersion)
    return float(loc.values[0]), float(disp.values[0])
