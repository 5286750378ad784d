"""A characteristic regressed on a process setting read from the same rows: readings on their
setting, or (subgrouped characteristics) each subgroup's mean on its mean setting, with the
prediction at a setting and the setting for a target. No I/O."""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from linewatch.engine.regression import Fit, Inverse, Prediction, fit, group_means


@dataclass(frozen=True, slots=True)
class SettingRegression:
    """The fit and what was asked of it."""

    setting: str  # the column's name
    of: str  # "readings" or "subgroup means (n=5)"
    fit: Fit | None  # None: too few pairs, or the setting does not vary
    points: np.ndarray  # the (setting, value) pairs fitted: shape (2, m)
    left_out: int  # values with no readable setting
    prediction: Prediction | None = None
    inverse: Inverse | None = None
    problem: str = ""


def subgroup_ids(starts: Sequence[int], total: int, subgroup_size: int) -> np.ndarray:
    """For each value, its subgroup's number over the whole series (subgroups restart at each
    phase start; values of a trailing incomplete subgroup get −1)."""
    ids = np.full(total, -1, dtype=np.int64)
    bounds = [*starts, total]
    nxt = 0
    for lo, hi in itertools.pairwise(bounds):
        m = (hi - lo) // subgroup_size
        ids[lo:lo + m * subgroup_size] = nxt + np.arange(m * subgroup_size) // subgroup_size
        nxt += m
    return ids


def regress_on_setting(
    values: np.ndarray,
    settings: np.ndarray,
    *,
    setting: str,
    subgroup_size: int = 1,
    starts: Sequence[int] = (0,),
    degree: int = 1,
    at: float | None = None,
    target: float | None = None,
) -> SettingRegression:
    """Least squares of the characteristic on the setting (NaN settings are left out)."""
    y = np.asarray(values, dtype=float)
    s = np.asarray(settings, dtype=float)
    left_out = int(np.count_nonzero(~np.isfinite(s)))
    if subgroup_size > 1:
        xs, ys = group_means(y, s, subgroup_ids(starts, y.shape[0], subgroup_size))
        of = f"subgroup means (n={subgroup_size})"
    else:
        keep = np.isfinite(s) & np.isfinite(y)
        xs, ys = s[keep], y[keep]
        of = "readings"
    f = fit(xs, ys, degree)
    pts = np.vstack([xs, ys])
    if f is None:
        need = degree + 2
        problem = (f"too few {of} with a readable {setting} ({xs.size}; at least {need}, "
                   f"at {degree + 1} settings or more)")
        return SettingRegression(setting, of, None, pts, left_out, problem=problem)
    return SettingRegression(
        setting, of, f, pts, left_out,
        f.predict(at) if at is not None else None,
        f.inverse(target) if target is not None else None,
    )
