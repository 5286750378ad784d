"""Where reading stopped: per file its identity and byte offset, per characteristic the engine's
state (an opaque JSON text the engine produces and reads back). Written inside the same
transaction as the points and alarms of the batch that moved them."""

from __future__ import annotations

import json
import time
from typing import TYPE_CHECKING

from linewatch.domain.records import FileState

if TYPE_CHECKING:
    from linewatch.store.db import Store


class IngestState:
    """Read and write file positions and engine state."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def save_file(self, state: FileState, now: float | None = None) -> None:
        """Insert or replace the position of one file."""
        with self.store.transaction() as conn:
            conn.execute(
                "INSERT INTO files (path, dev, inode, fingerprint, offset, next_line, header, "
                "updated_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?) ON CONFLICT (path) DO UPDATE SET "
                "dev = excluded.dev, inode = excluded.inode, fingerprint = excluded.fingerprint, "
                "offset = excluded.offset, next_line = excluded.next_line, "
                "header = excluded.header, updated_at = excluded.updated_at",
                (
                    state.path,
                    state.dev,
                    state.inode,
                    state.fingerprint,
                    state.offset,
                    state.next_line,
                    None if state.header is None else json.dumps(list(state.header)),
                    time.time() if now is None else now,
                ),
            )

    def forget_file(self, path: str) -> None:
        """Drop the position of a file that is no longer followed."""
        with self.store.transaction() as conn:
            conn.execute("DELETE FROM files WHERE path = ?", (path,))

    def files(self) -> dict[str, FileState]:
        """Every saved file position, by path."""
        rows = self.store.query(
            "SELECT path, dev, inode, fingerprint, offset, next_line, header FROM files "
            "ORDER BY path"
        )
        return {
            r["path"]: FileState(
                r["path"], r["dev"], r["inode"], r["fingerprint"], r["offset"], r["next_line"],
                _header(r["header"]),
            )
            for r in rows
        }

    def save_engine(self, characteristic: str, state: str, now: float | None = None) -> None:
        """Insert or replace one characteristic's engine state (JSON text)."""
        with self.store.transaction() as conn:
            conn.execute(
                "INSERT INTO engine_state (characteristic, state, updated_at) VALUES (?, ?, ?) "
                "ON CONFLICT (characteristic) DO UPDATE SET state = excluded.state, "
                "updated_at = excluded.updated_at",
                (characteristic, state, time.time() if now is None else now),
            )

    def engines(self) -> dict[str, str]:
        """Every saved engine state, by characteristic."""
        rows = self.store.query("SELECT characteristic, state FROM engine_state")
        return {r[0]: r[1] for r in rows}


def _header(text: str | None) -> tuple[str, ...] | None:
    """A saved header back from its JSON list (None when none was saved or it is unreadable)."""
    if not text:
        return None
    try:
        names = json.loads(text)
    except ValueError:
        return None
    return tuple(str(n) for n in names) if isinstance(names, list) else None
