"""The key-value `meta` table: the few single values that have no table of their own.

The keys in use (DEVELOPERS.md lists them too): `audit_head` (audit.py: the trail's newest
sequence number and hash), `alarm_flood` (the alarm flood going on now, JSON; '' when none),
`unread-lines:<file>` and `time-stamps:<file>` (ingest.py: per-file counts the collector keeps
with the offsets), `limits-refused:<characteristic>` (ingest.py: why the current phase has no
limits). Anything that is a list of things, or is looked up by part of its key, gets
a table instead (e.g. the baseline requests, requests.py).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from linewatch.store.db import Store


class Meta:
    """Read and write single values of the `meta` table (joining the caller's transaction)."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def get(self, key: str) -> str | None:
        """The value of `key`, or None when it was never set."""
        rows = self.store.query("SELECT value FROM meta WHERE key = ?", (key,))
        return str(rows[0][0]) if rows else None

    def set(self, key: str, value: str) -> None:
        """Set the value of `key`."""
        with self.store.transaction() as conn:
            conn.execute(
                "INSERT INTO meta (key, value) VALUES (?, ?) "
                "ON CONFLICT (key) DO UPDATE SET value = excluded.value",
                (key, value),
            )
