"""New-baseline requests: any instance, the screen's close-up or the `baseline` command asks
for a new phase of limits; the collector carries each request out once, in the same
transaction as the engine state it changes, and the row then says which phase it started (so
the limits formed later carry the request's reason and actor).

A row per request, looked up by exact characteristic name (a name with '_' or '%' matches only
itself). A newer request for a characteristic replaces one the collector has not taken yet.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import TYPE_CHECKING

from linewatch.domain.errors import LinewatchError
from linewatch.store.actor import current_actor

if TYPE_CHECKING:
    import sqlite3

    from linewatch.store.db import Store

PENDING, DONE, FAILED, REPLACED = "pending", "done", "failed", "replaced"
_FIELDS = ("id, characteristic, start_index, reason, actor, asked_at, state, phase, settled_at, "
           "problem")


@dataclass(frozen=True, slots=True)
class BaselineRequest:
    """One request for a new phase and what became of it."""

    id: int
    characteristic: str
    start_index: int
    reason: str
    actor: str | None
    asked_at: float | None  # None: brought over from an older store, time unknown
    state: str  # pending, done, failed or replaced
    phase: int | None  # the phase it started (done)
    settled_at: float | None
    problem: str  # why it could not be carried out (failed)


def _request(row: sqlite3.Row) -> BaselineRequest:
    return BaselineRequest(*tuple(row))


class BaselineRequests:
    """The `baseline_requests` table."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def ask(self, characteristic: str, start_index: int, reason: str, *,
            actor: str | None = None, now: float | None = None) -> int:
        """Leave a request for the collector (whichever instance holds the lease); returns its
        id. `actor` defaults to this process's user."""
        if not reason.strip():
            raise LinewatchError("a reason is required for a new baseline")
        now = time.time() if now is None else now
        with self.store.transaction() as conn:
            conn.execute(
                "UPDATE baseline_requests SET state = ?, settled_at = ? "
                "WHERE state = ? AND characteristic = ?",
                (REPLACED, now, PENDING, characteristic),
            )
            cur = conn.execute(
                "INSERT INTO baseline_requests (characteristic, start_index, reason, actor, "
                "asked_at, state) VALUES (?, ?, ?, ?, ?, ?)",
                (characteristic, int(start_index), reason.strip(),
                 current_actor() if actor is None else actor, now, PENDING),
            )
        return int(cur.lastrowid or 0)

    def pending(self) -> list[BaselineRequest]:
        """Requests not yet taken up, oldest first."""
        rows = self.store.query(
            f"SELECT {_FIELDS} FROM baseline_requests WHERE state = ? ORDER BY id", (PENDING,))
        return [_request(r) for r in rows]

    def carried_out(self, request_id: int, phase: int, start_index: int, now: float) -> None:
        """The collector started `phase` from `start_index` for the request."""
        with self.store.transaction() as conn:
            conn.execute(
                "UPDATE baseline_requests SET state = ?, phase = ?, start_index = ?, "
                "settled_at = ? WHERE id = ?",
                (DONE, phase, start_index, now, request_id),
            )

    def refused(self, request_id: int, problem: str, now: float) -> None:
        """The collector could not carry the request out, for the reason given."""
        with self.store.transaction() as conn:
            conn.execute(
                "UPDATE baseline_requests SET state = ?, problem = ?, settled_at = ? "
                "WHERE id = ?",
                (FAILED, problem, now, request_id),
            )

    def for_phase(self, characteristic: str, phase: int) -> BaselineRequest | None:
        """The request that started `phase` of `characteristic`, if one did."""
        rows = self.store.query(
            f"SELECT {_FIELDS} FROM baseline_requests WHERE characteristic = ? AND phase = ? "
            "AND state = ? ORDER BY id DESC LIMIT 1", (characteristic, phase, DONE))
        return _request(rows[0]) if rows else None

    def of(self, characteristic: str) -> list[BaselineRequest]:
        """Every request for `characteristic`, oldest first."""
        rows = self.store.query(
            f"SELECT {_FIELDS} FROM baseline_requests WHERE characteristic = ? ORDER BY id",
            (characteristic,))
        return [_request(r) for r in rows]

    def waiting_start(self, characteristic: str, newest_phase: int) -> int | None:
        """Where the newest phase asked for starts while its limits are not in yet: a request
        not yet taken up, or one that started a phase later than `newest_phase` (the newest
        phase with limits). None when nothing waits."""
        with self.store.snapshot() as conn:
            row = conn.execute(
                "SELECT start_index FROM baseline_requests WHERE characteristic = ? AND "
                "state = ? ORDER BY id DESC LIMIT 1", (characteristic, PENDING)).fetchone()
            if row is None:
                row = conn.execute(
                    "SELECT start_index FROM baseline_requests WHERE characteristic = ? AND "
                    "state = ? AND phase > ? ORDER BY phase DESC, id DESC LIMIT 1",
                    (characteristic, DONE, newest_phase)).fetchone()
        return None if row is None else int(row[0])
