"""Alarm rows and their derived ISA-18.2 / IEC 62682 state. The lifecycle rules (when to raise,
extend, return, close) live in `linewatch.alarms.lifecycle`; this module only stores and reads."""

from __future__ import annotations

from dataclasses import dataclass, fields
from typing import TYPE_CHECKING, Any

from linewatch.domain.alarm_states import AlarmState

if TYPE_CHECKING:
    from linewatch.store.db import Store


@dataclass(slots=True)
class StoredAlarm:
    """One alarm as stored. `active`: the condition is present; `acknowledged`: a person has
    acknowledged it; the state shown is derived from these and `shelved_until`."""

    id: int
    kind: str
    characteristic: str
    chart: str
    rule: str
    first_index: int | None
    last_index: int | None
    priority: int
    raised_at: float
    updated_at: float
    active: bool
    acknowledged: bool = False
    acknowledged_by: str | None = None
    acknowledged_from: str | None = None
    acknowledged_at: float | None = None
    reason: str | None = None
    note: str | None = None
    shelved_until: float | None = None
    shelved_by: str | None = None
    shelve_reason: str | None = None
    returned_at: float | None = None
    closed_at: float | None = None
    file: str | None = None
    detail: str = ""
    signals: int = 0  # distinct firing points (measurements, for out-of-spec) of all episodes
    episodes: int = 1
    rules: str = "{}"  # JSON object: rule id -> signalling points
    below_lsl: int | None = None  # out-of-spec: parts below LSL (None for other kinds)
    above_usl: int | None = None
    escalated_at: float | None = None
    episode_first: int | None = None  # first firing of the current (latest) episode

    def state(self, now: float) -> AlarmState:
        """shelved while shelved_until lies ahead; otherwise from (active, acknowledged)."""
        if self.closed_at is None and self.shelved_until is not None and self.shelved_until > now:
            return AlarmState.SHELVED
        if self.active:
            return AlarmState.ACKNOWLEDGED if self.acknowledged else AlarmState.UNACKNOWLEDGED
        return AlarmState.NORMAL if self.acknowledged else AlarmState.RETURNED_UNACKNOWLEDGED

    @property
    def is_open(self) -> bool:
        """Not yet closed (closed = returned to normal and acknowledged)."""
        return self.closed_at is None

    @property
    def rule_counts(self) -> dict[str, int]:
        """Signalling points per rule over every episode."""
        import json

        counts: dict[str, int] = json.loads(self.rules or "{}")
        return counts

    def as_dict(self) -> dict[str, Any]:
        """All stored fields, for JSON (the hook, exports)."""
        return {f.name: getattr(self, f.name) for f in fields(self)}


@dataclass(frozen=True, slots=True)
class Shelf:
    """A characteristic shelved as a whole until `until`."""

    characteristic: str
    until: float
    actor: str
    reason: str


_COLUMNS = tuple(f.name for f in fields(StoredAlarm))
_SELECT = f"SELECT {', '.join(_COLUMNS)} FROM alarms"


def _stored_alarm(row: Any) -> StoredAlarm:
    alarm = StoredAlarm(*tuple(row))
    alarm.active = bool(alarm.active)
    alarm.acknowledged = bool(alarm.acknowledged)
    return alarm


class AlarmRows:
    """Insert, update and query alarm rows."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def insert(self, **values: Any) -> int:
        """Add an alarm; returns its id."""
        unknown = set(values) - set(_COLUMNS)
        if unknown or "id" in values:
            raise ValueError(f"not alarm columns: {sorted(unknown | ({'id'} & set(values)))}")
        names = list(values)
        with self.store.transaction() as conn:
            cursor = conn.execute(
                f"INSERT INTO alarms ({', '.join(names)}) VALUES ({', '.join('?' * len(names))})",
                [values[n] for n in names],
            )
            return int(cursor.lastrowid or 0)

    def update(self, alarm_id: int, **values: Any) -> None:
        """Change some fields of one alarm."""
        unknown = set(values) - set(_COLUMNS) | ({"id"} & set(values))
        if unknown:
            raise ValueError(f"not updatable alarm columns: {sorted(unknown)}")
        assignments = ", ".join(f"{n} = ?" for n in values)
        with self.store.transaction() as conn:
            conn.execute(
                f"UPDATE alarms SET {assignments} WHERE id = ?", [*values.values(), alarm_id]
            )

    def get(self, alarm_id: int) -> StoredAlarm | None:
        """One alarm by id."""
        rows = self.store.query(f"{_SELECT} WHERE id = ?", (alarm_id,))
        return _stored_alarm(rows[0]) if rows else None

    def open(self, characteristic: str | None = None) -> list[StoredAlarm]:
        """Alarms not yet closed (optionally of one characteristic), oldest first."""
        if characteristic is None:
            rows = self.store.query(f"{_SELECT} WHERE closed_at IS NULL ORDER BY id")
        else:
            rows = self.store.query(
                f"{_SELECT} WHERE closed_at IS NULL AND characteristic = ? ORDER BY id",
                (characteristic,),
            )
        return [_stored_alarm(r) for r in rows]

    def active(self, characteristic: str, chart: str, rule: str) -> StoredAlarm | None:
        """The alarm whose condition is still present for this characteristic, chart and rule."""
        rows = self.store.query(
            f"{_SELECT} WHERE closed_at IS NULL AND active = 1 AND characteristic = ? "
            "AND chart = ? AND rule = ? ORDER BY id DESC LIMIT 1",
            (characteristic, chart, rule),
        )
        return _stored_alarm(rows[0]) if rows else None

    def open_on_chart(
        self, characteristic: str, chart: str, kinds: tuple[str, ...]
    ) -> StoredAlarm | None:
        """The open alarm of one condition (one chart, alarms of `kinds`): there is at most one."""
        marks = ", ".join("?" * len(kinds))
        rows = self.store.query(
            f"{_SELECT} WHERE closed_at IS NULL AND characteristic = ? AND chart = ? "
            f"AND kind IN ({marks}) ORDER BY id DESC LIMIT 1",
            (characteristic, chart, *kinds),
        )
        return _stored_alarm(rows[0]) if rows else None

    def raised_since(self, since: float) -> int:
        """How many alarms were raised or re-raised (annunciated) since `since`."""
        rows = self.store.query(
            "SELECT COUNT(*) FROM audit WHERE at >= ? AND action IN ('raised', 're-raised') "
            "AND payload NOT LIKE '%\"shelved\":true%'",
            (since,),
        )
        return int(rows[0][0])

    def set_shelf(self, characteristic: str, until: float, actor: str, reason: str) -> None:
        """Shelve a characteristic as a whole until `until` (replacing an earlier shelf)."""
        with self.store.transaction() as conn:
            conn.execute(
                "INSERT INTO shelves (characteristic, until, actor, reason) VALUES (?, ?, ?, ?) "
                "ON CONFLICT (characteristic) DO UPDATE SET until = excluded.until, "
                "actor = excluded.actor, reason = excluded.reason",
                (characteristic, until, actor, reason),
            )

    def shelf(self, characteristic: str, now: float) -> Shelf | None:
        """The characteristic's shelf, while it lasts."""
        rows = self.store.query(
            "SELECT characteristic, until, actor, reason FROM shelves "
            "WHERE characteristic = ? AND until > ?",
            (characteristic, now),
        )
        return Shelf(*tuple(rows[0])) if rows else None

    def end_shelves(self, now: float) -> list[str]:
        """Remove characteristic shelves whose time is over; returns their characteristics."""
        rows = self.store.query("SELECT characteristic FROM shelves WHERE until <= ?", (now,))
        if rows:
            with self.store.transaction() as conn:
                conn.execute("DELETE FROM shelves WHERE until <= ?", (now,))
        return [str(r[0]) for r in rows]

    def shelf_expired(self, now: float) -> list[StoredAlarm]:
        """Alarms whose shelving time has passed but that still carry it."""
        rows = self.store.query(
            f"{_SELECT} WHERE closed_at IS NULL AND shelved_until IS NOT NULL "
            "AND shelved_until <= ? ORDER BY id",
            (now,),
        )
        return [_stored_alarm(r) for r in rows]

    def add_signals(self, characteristic: str, chart: str,
                    firings: list[tuple[int, str]]) -> None:
        """Remember where each rule fired (index, rule), for the chart marks."""
        if not firings:
            return
        with self.store.transaction() as conn:
            conn.executemany(
                "INSERT OR IGNORE INTO signals (characteristic, chart, idx, rule) "
                "VALUES (?, ?, ?, ?)",
                [(characteristic, chart, i, rule) for i, rule in firings],
            )

    def signals_over(self, characteristic: str, from_index: int) -> dict[str, dict[int, list[str]]]:
        """chart -> point index -> rules that fired there, for points `from_index` on."""
        marks: dict[str, dict[int, list[str]]] = {}
        for chart, idx, rule in self.store.query(
            "SELECT chart, idx, rule FROM signals WHERE characteristic = ? AND idx >= ? "
            "ORDER BY idx, chart, rule",
            (characteristic, from_index),
        ):
            marks.setdefault(str(chart), {}).setdefault(int(idx), []).append(str(rule))
        return marks

    def all(self) -> list[StoredAlarm]:
        """Every alarm, oldest first."""
        return [_stored_alarm(r) for r in self.store.query(f"{_SELECT} ORDER BY id")]

    def between(self, since: float, until: float) -> list[StoredAlarm]:
        """Alarms that were open at some moment of [since, until): raised before `until` and not
        closed before `since`. Oldest first."""
        rows = self.store.query(
            f"{_SELECT} WHERE raised_at < ? AND (closed_at IS NULL OR closed_at >= ?) ORDER BY id",
            (until, since),
        )
        return [_stored_alarm(r) for r in rows]
