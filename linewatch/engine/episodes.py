"""THE definition of an alarm episode: a stretch of firings on one chart with few quiet points.

A chart's firing points (any rule), in order, form episodes. An episode returns to normal at the
`clear_after`-th consecutive quiet plotted point after its last firing (`clear_after = 1`: at the
first quiet point); a firing after that opens the next episode. So two firings belong to the same
episode when fewer than `clear_after` quiet points lie between them. The same definition serves
out-of-spec readings (`engine.spec`, counted in readings). The alarm lifecycle
(`linewatch.alarms`) applies it incrementally; this vectorised form is what a whole history
gives, and property tests hold the two equal.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

DEFAULT_CLEAR_AFTER = 8  # plotted points (or measurements) without a firing


@dataclass(frozen=True, slots=True)
class Episode:
    """Firings first..last (point indices); `returned_at` is the quiet point at which the
    episode returned to normal, None while it has not (yet) been judged that far."""

    first: int
    last: int
    signals: int  # distinct firing points
    returned_at: int | None


def returns_at(last_firing: int, clear_after: int) -> int:
    """The point at which an episode whose last firing is `last_firing` returns to normal."""
    return last_firing + clear_after


def same_episode(previous_firing: int, firing: int, clear_after: int) -> bool:
    """Does `firing` continue the episode whose latest firing is `previous_firing`?"""
    return firing <= returns_at(previous_firing, clear_after)


def episodes(
    firings: Sequence[int] | np.ndarray, judged_until: int, clear_after: int
) -> list[Episode]:
    """Episodes of a chart whose points up to `judged_until` have been judged and fired at
    `firings` (indices, any order, repeats allowed: several rules at one point)."""
    if clear_after < 1:
        raise ValueError(f"clear_after must be at least 1, got {clear_after}")
    idx = np.unique(np.asarray(firings, dtype=np.int64))
    if idx.shape[0] == 0:
        return []
    breaks = np.flatnonzero(np.diff(idx) > clear_after) + 1
    starts = np.concatenate(([0], breaks))
    ends = np.concatenate((breaks - 1, [idx.shape[0] - 1]))
    out: list[Episode] = []
    for s, e in zip(starts.tolist(), ends.tolist(), strict=True):
        back = returns_at(int(idx[e]), clear_after)
        out.append(Episode(int(idx[s]), int(idx[e]), e - s + 1,
                           back if back <= judged_until else None))
    return out
