"""Who collects: several linewatch instances may share one state directory, but only one reads the
logs and writes alarms. That one holds a lease row it renews about every second; the lease
expires a few seconds after the last renewal, so when the collector exits (and releases) or dies
(and stops renewing) a viewer takes over within the expiry plus one renewal interval.

Wall-clock times are compared across processes on one machine (one state directory is local).
"""

from __future__ import annotations

import os
import socket
import time
import uuid
from dataclasses import dataclass
from typing import TYPE_CHECKING

from linewatch.domain.errors import LeaseLost

if TYPE_CHECKING:
    from linewatch.store.db import Store

RENEW_EVERY = 0.5  # seconds between renewals by the collector (and attempts by viewers)
EXPIRES_AFTER = 3.0  # seconds after the last renewal that the lease lapses


@dataclass(frozen=True, slots=True)
class LeaseHolder:
    """The current collector as the lease row records it."""

    holder: str
    pid: int
    host: str
    acquired_at: float
    expires_at: float


class Lease:
    """The collector lease of one instance (`instance_id` unique per running instance)."""

    def __init__(
        self, store: Store, instance_id: str | None = None, expires_after: float = EXPIRES_AFTER
    ) -> None:
        self.store = store
        self.instance_id = instance_id or uuid.uuid4().hex
        self.expires_after = expires_after
        self.held = False

    def try_acquire(self, now: float | None = None) -> bool:
        """Take the lease if it is free, expired or already ours; True when we hold it."""
        now = time.time() if now is None else now
        with self.store.transaction() as conn:
            row = conn.execute("SELECT holder, expires_at FROM lease WHERE id = 1").fetchone()
            if row is not None and row[0] != self.instance_id and row[1] > now:
                self.held = False
                return False
            conn.execute(
                "INSERT INTO lease (id, holder, pid, host, acquired_at, expires_at) "
                "VALUES (1, ?, ?, ?, ?, ?) ON CONFLICT (id) DO UPDATE SET holder = excluded.holder,"
                " pid = excluded.pid, host = excluded.host, expires_at = excluded.expires_at, "
                "acquired_at = CASE WHEN lease.holder = excluded.holder THEN lease.acquired_at "
                "ELSE excluded.acquired_at END",
                (
                    self.instance_id,
                    os.getpid(),
                    socket.gethostname(),
                    now,
                    now + self.expires_after,
                ),
            )
        self.held = True
        return True

    def renew(self, now: float | None = None) -> bool:
        """Extend our lease; False when it was lost (another instance took it after expiry)."""
        now = time.time() if now is None else now
        with self.store.transaction() as conn:
            changed = conn.execute(
                "UPDATE lease SET expires_at = ? WHERE id = 1 AND holder = ?",
                (now + self.expires_after, self.instance_id),
            ).rowcount
        self.held = changed == 1
        return self.held

    def ensure(self) -> None:
        """Raise LeaseLost unless we still hold the lease. Call it first inside each batch's
        transaction: transactions are serialised, so a collector that stalled past expiry and
        was replaced rolls its batch back instead of writing it twice."""
        with self.store.transaction() as conn:
            row = conn.execute("SELECT holder FROM lease WHERE id = 1").fetchone()
        if row is None or row[0] != self.instance_id:
            self.held = False
            raise LeaseLost(f"instance {self.instance_id} no longer collects")

    def release(self) -> None:
        """Give the lease up at once (on a clean exit) so a viewer takes over without waiting."""
        with self.store.transaction() as conn:
            conn.execute("DELETE FROM lease WHERE id = 1 AND holder = ?", (self.instance_id,))
        self.held = False

    def holder(self) -> LeaseHolder | None:
        """Who holds (or last held) the lease."""
        rows = self.store.query(
            "SELECT holder, pid, host, acquired_at, expires_at FROM lease WHERE id = 1"
        )
        return LeaseHolder(*tuple(rows[0])) if rows else None
