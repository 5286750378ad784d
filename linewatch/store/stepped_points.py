"""Points of charts whose limits step: each plotted statistic with its subgroup size and its
own centre and limits (NULL while its phase's baseline forms), keyed by characteristic, chart
and point index. A point written again (judged once its phase has limits) replaces the first.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from linewatch.store.db import Store


@dataclass(frozen=True, slots=True)
class StoredSteppedPoint:
    """One stored point with its own limits."""

    characteristic: str
    chart: str
    index: int
    value: float
    n: float
    center: float | None
    ucl: float | None
    lcl: float | None
    sigma: float | None
    phase: int
    line: int
    file: str | None
    time: str | None


class SteppedPoints:
    """The `stepped_points` table."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def put(self, records: Iterable[StoredSteppedPoint]) -> None:
        """Write points (inside the caller's transaction); a point judged later replaces its
        first, limitless form."""
        rows = [(r.characteristic, r.chart, r.index, r.value, r.n, r.center, r.ucl, r.lcl,
                 r.sigma, r.phase, r.line, r.file, r.time) for r in records]
        if not rows:
            return
        with self.store.transaction() as conn:
            conn.executemany(
                "INSERT OR REPLACE INTO stepped_points (characteristic, chart, idx, value, n, "
                "center, ucl, lcl, sigma, phase, line, file, time) "
                "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)", rows)

    def last(self, characteristic: str, chart: str, count: int) -> list[StoredSteppedPoint]:
        """The newest `count` points of one chart, oldest first."""
        rows = self.store.query(
            "SELECT characteristic, chart, idx, value, n, center, ucl, lcl, sigma, phase, line, "
            "file, time FROM stepped_points WHERE characteristic = ? AND chart = ? "
            "ORDER BY idx DESC LIMIT ?", (characteristic, chart, count))
        return [StoredSteppedPoint(*tuple(r)) for r in reversed(rows)]

    def charts(self, characteristic: str) -> list[str]:
        """The charts of one characteristic that have points."""
        rows = self.store.query("SELECT DISTINCT chart FROM stepped_points "
                                "WHERE characteristic = ?", (characteristic,))
        return [str(r[0]) for r in rows]
