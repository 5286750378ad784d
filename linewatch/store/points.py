"""History the faces and the shift report read: raw points, the limits of every phase, feed
events, and each characteristic's settings (so shell commands work without the config file).

Points are pruned by age and by count per characteristic; the defaults keep a week, far more than
a shift report needs.
"""

from __future__ import annotations

import json
import time
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

from linewatch.domain.records import FeedEvent, Limits

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig
    from linewatch.store.db import Store

KEEP_SECONDS = 7 * 86400.0
KEEP_POINTS = 500_000  # per characteristic
PRUNE_EVERY = 3600.0  # seconds between automatic prunes while points are being added


@dataclass(frozen=True, slots=True)
class StoredPoint:
    """One stored reading; `index` is its 0-based position in the characteristic's series."""

    characteristic: str
    index: int
    value: float
    line: int
    file: str
    time: str | None
    received_at: float


@dataclass(frozen=True, slots=True)
class StoredLimits:
    """One stored limit set: the limits, why they were set and when."""

    limits: Limits
    reason: str
    set_at: float


@dataclass(frozen=True, slots=True)
class StoredFeedEvent:
    """A stored feed event with the time it was stored."""

    at: float
    event: FeedEvent


@dataclass(frozen=True, slots=True)
class CharacteristicSettings:
    """What the store remembers of a characteristic's config: units, specs, reasons, plans."""

    name: str
    unit: str = ""
    lsl: float | None = None
    usl: float | None = None
    reasons: list[str] = field(default_factory=list)
    reaction_plan: str = ""
    reaction_plans: dict[str, str] = field(default_factory=dict)
    subgroup_size: int | None = None  # None: written by a linewatch that did not store it
    dispersion: str | None = None


class History:
    """Points, limits, feed events and characteristic settings."""

    def __init__(
        self,
        store: Store,
        keep_seconds: float = KEEP_SECONDS,
        keep_points: int = KEEP_POINTS,
        prune_every: float = PRUNE_EVERY,
    ) -> None:
        self.store = store
        self.keep_seconds = keep_seconds
        self.keep_points = keep_points
        self.prune_every = prune_every
        self._last_prune = float("-inf")

    # -- points -----------------------------------------------------------------------------

    def add_points(
        self,
        characteristic: str,
        first_index: int,
        values: Sequence[float],
        lines: Sequence[int],
        file: str,
        times: Sequence[str | None] | None = None,
        received_at: float | None = None,
    ) -> None:
        """Append consecutive readings (columnar, as a parsed batch holds them). An index stored
        twice is an error, never a silent duplicate. About once an hour this also prunes old
        points (in the same transaction), so the table stays bounded without a separate job."""
        if len(values) != len(lines) or (times is not None and len(times) != len(values)):
            raise ValueError("values, lines and times must have the same length")
        at = time.time() if received_at is None else received_at
        tms: Iterable[str | None] = times if times is not None else [None] * len(values)
        rows = [
            (characteristic, first_index + k, float(v), int(ln), file, t, at)
            for k, (v, ln, t) in enumerate(zip(values, lines, tms, strict=True))
        ]
        with self.store.transaction() as conn:
            conn.executemany(
                "INSERT INTO points (characteristic, idx, value, line, file, time, received_at) "
                "VALUES (?, ?, ?, ?, ?, ?, ?)",
                rows,
            )
            if at - self._last_prune >= self.prune_every:
                self.prune(at)

    def points(
        self, characteristic: str, since: float | None = None, until: float | None = None
    ) -> list[StoredPoint]:
        """Points of one characteristic received in [since, until), oldest first."""
        rows = self.store.query(
            "SELECT characteristic, idx, value, line, file, time, received_at FROM points "
            "INDEXED BY points_by_characteristic_time "
            "WHERE characteristic = ? AND received_at >= ? AND received_at < ? ORDER BY idx",
            (characteristic, -1e300 if since is None else since, 1e300 if until is None else until),
        )
        return [StoredPoint(*tuple(r)) for r in rows]

    def last_points(self, characteristic: str, n: int) -> list[StoredPoint]:
        """The newest `n` points of one characteristic, oldest first."""
        rows = self.store.query(
            "SELECT characteristic, idx, value, line, file, time, received_at FROM points "
            "WHERE characteristic = ? ORDER BY idx DESC LIMIT ?",
            (characteristic, max(0, n)),
        )
        return [StoredPoint(*tuple(r)) for r in reversed(rows)]

    def characteristics_with_points(self) -> list[str]:
        """Names of characteristics that have stored points, sorted. Each step is one index
        seek (a skip scan), so the cost does not grow with the number of points."""
        names: list[str] = []
        row = self.store.query("SELECT MIN(characteristic) FROM points")
        while row and row[0][0] is not None:
            names.append(row[0][0])
            row = self.store.query(
                "SELECT MIN(characteristic) FROM points WHERE characteristic > ?", (names[-1],)
            )
        return names

    def prune(self, now: float | None = None) -> int:
        """Drop points more than `keep_seconds` older than their characteristic's newest point
        (or than now, if sooner) and beyond its newest `keep_points`; returns how many went.

        Counting back from the newest point keeps the last stretch of a history caught up
        from an old file (its points carry when the file was written), so its charts still
        have something to show."""
        now = time.time() if now is None else now
        self._last_prune = now
        gone = 0
        with self.store.transaction() as conn:
            for name in self.characteristics_with_points():
                newest, newest_at = conn.execute(
                    "SELECT MAX(idx), MAX(received_at) FROM points WHERE characteristic = ?",
                    (name,),
                ).fetchone()
                gone += conn.execute(
                    "DELETE FROM points WHERE characteristic = ? AND received_at < ?",
                    (name, min(now, newest_at) - self.keep_seconds),
                ).rowcount
                gone += conn.execute(
                    "DELETE FROM points WHERE characteristic = ? AND idx <= ?",
                    (name, newest - self.keep_points),
                ).rowcount
                oldest = conn.execute("SELECT MIN(idx) FROM points WHERE characteristic = ?",
                                      (name,)).fetchone()[0]
                if oldest is not None:  # plotted indices are at most readings / 1, at least / 25
                    conn.execute("DELETE FROM signals WHERE characteristic = ? AND idx < ?",
                                 (name, oldest // 25))
        return gone

    # -- limits -----------------------------------------------------------------------------

    def record_limits(
        self,
        limits: Limits,
        reason: str = "",
        now: float | None = None,
        actor: str | None = None,
        new_baseline: bool = False,
    ) -> None:
        """Add limits to the history and to the audit trail ("limits-set", or "new-baseline" when
        a person started a new phase), in one transaction."""
        at = time.time() if now is None else now
        with self.store.transaction() as conn:
            conn.execute(
                "INSERT INTO limits (characteristic, chart, phase, start_index, center, ucl, lcl, "
                "sigma, reason, set_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (
                    limits.characteristic,
                    limits.chart,
                    limits.phase,
                    limits.start_index,
                    limits.center,
                    limits.ucl,
                    limits.lcl,
                    limits.sigma,
                    reason,
                    at,
                ),
            )
            self.store.audit.append(
                "new-baseline" if new_baseline else "limits-set",
                f"{limits.characteristic}/{limits.chart}",
                {
                    "phase": limits.phase,
                    "start_index": limits.start_index,
                    "center": limits.center,
                    "ucl": limits.ucl,
                    "lcl": limits.lcl,
                    "sigma": limits.sigma,
                    "reason": reason,
                },
                at=at,
                actor=actor,
            )

    def limits_history(
        self, characteristic: str | None = None, since: float | None = None,
        until: float | None = None,
    ) -> list[StoredLimits]:
        """Limits set in [since, until), for one characteristic or all, oldest first."""
        sql = (
            "SELECT characteristic, chart, center, ucl, lcl, sigma, phase, start_index, reason, "
            "set_at FROM limits WHERE set_at >= ? AND set_at < ?"
        )
        params: list[object] = [
            -1e300 if since is None else since, 1e300 if until is None else until
        ]
        if characteristic is not None:
            sql += " AND characteristic = ?"
            params.append(characteristic)
        rows = self.store.query(sql + " ORDER BY set_at, id", params)
        return [StoredLimits(Limits(*tuple(r)[:8]), r["reason"], r["set_at"]) for r in rows]

    def current_limits(self, characteristic: str) -> dict[str, Limits]:
        """The newest limits of each chart of one characteristic."""
        out: dict[str, Limits] = {}
        for record in self.limits_history(characteristic):
            out[record.limits.chart] = record.limits
        return out

    # -- feed events ------------------------------------------------------------------------

    def add_feed_event(self, event: FeedEvent, at: float | None = None) -> None:
        """Record something that happened to a followed file."""
        with self.store.transaction() as conn:
            conn.execute(
                "INSERT INTO feed_events (at, kind, file, detail) VALUES (?, ?, ?, ?)",
                (time.time() if at is None else at, event.kind, event.file, event.detail),
            )

    def feed_events(
        self, since: float | None = None, until: float | None = None
    ) -> list[StoredFeedEvent]:
        """Feed events recorded in [since, until), oldest first."""
        rows = self.store.query(
            "SELECT at, kind, file, detail FROM feed_events WHERE at >= ? AND at < ? "
            "ORDER BY at, id",
            (-1e300 if since is None else since, 1e300 if until is None else until),
        )
        return [StoredFeedEvent(r[0], FeedEvent(r[1], r[2], r[3])) for r in rows]

    # -- characteristic settings ------------------------------------------------------------

    def save_characteristics(self, characteristics: Iterable[CharacteristicConfig]) -> None:
        """Remember units, specs, reasons and reaction plans of the configured characteristics."""
        with self.store.transaction() as conn:
            for c in characteristics:
                conn.execute(
                    "INSERT INTO characteristics (name, unit, lsl, usl, reasons, reaction_plan, "
                    "reaction_plans, subgroup_size, dispersion) "
                    "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (name) DO UPDATE "
                    "SET unit = excluded.unit, lsl = excluded.lsl, usl = excluded.usl, "
                    "reasons = excluded.reasons, reaction_plan = excluded.reaction_plan, "
                    "reaction_plans = excluded.reaction_plans, "
                    "subgroup_size = excluded.subgroup_size, dispersion = excluded.dispersion",
                    (
                        c.name,
                        c.unit,
                        c.lsl,
                        c.usl,
                        json.dumps(list(c.reasons)),
                        c.reaction_plan,
                        json.dumps(dict(c.reaction_plans)),
                        c.subgroup_size,
                        c.effective_dispersion,
                    ),
                )

    def settings(self, name: str) -> CharacteristicSettings | None:
        """The remembered settings of one characteristic, if any."""
        rows = self.store.query("SELECT * FROM characteristics WHERE name = ?", (name,))
        if not rows:
            return None
        r = rows[0]
        return CharacteristicSettings(
            name=r["name"],
            unit=r["unit"],
            lsl=r["lsl"],
            usl=r["usl"],
            reasons=list(json.loads(r["reasons"])),
            reaction_plan=r["reaction_plan"],
            reaction_plans=dict(json.loads(r["reaction_plans"])),
            subgroup_size=r["subgroup_size"],
            dispersion=r["dispersion"],
        )
