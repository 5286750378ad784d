"""Where reading stopped: per file its identity and byte offset, per characteristic the engine's
state (an opaque JSON text the engine produces and reads back) and why its limits were refused,
if they were, and per file the counts the collector keeps beside the offset (lines it could not
read for want of a header, time stamps that went backwards or could not be read). Written
inside the same transaction as the points and alarms of the batch that moved them."""

from __future__ import annotations

import json
import time
from typing import TYPE_CHECKING

from linewatch.domain.records import FileState

if TYPE_CHECKING:
    from linewatch.store.db import Store

UNREAD_LINES = "unread-lines:{file}"  # meta key: lines of a file with no header to go by
TIME_COUNTS = "time-stamps:{file}"  # meta key: "<went backwards>,<not readable>" of a file
LIMITS_REFUSED = "limits-refused:{name}"  # meta key: why this phase's limits were refused


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

    def unread_lines(self, path: str) -> int:
        """Lines of the file not read because no header told what they hold."""
        return int(self.store.meta.get(UNREAD_LINES.format(file=path)) or 0)

    def add_unread_lines(self, path: str, lines: int) -> None:
        """Count `lines` more unread lines of the file."""
        with self.store.transaction():
            total = self.unread_lines(path) + lines
            self.store.meta.set(UNREAD_LINES.format(file=path), str(total))

    def take_unread_lines(self, path: str) -> int:
        """The file's unread lines so far, and the count back to 0 (its rows are read now)."""
        with self.store.transaction():
            before = self.unread_lines(path)
            if before:
                self.store.meta.set(UNREAD_LINES.format(file=path), "0")
        return before

    def time_counts(self, path: str) -> tuple[int, int] | None:
        """(went backwards, not readable) time stamps of the file so far; None when none
        were counted."""
        raw = self.store.meta.get(TIME_COUNTS.format(file=path))
        if not raw:
            return None
        backwards, unreadable = (int(x) for x in raw.split(","))
        return backwards, unreadable

    def save_time_counts(self, path: str, counts: tuple[int, int]) -> None:
        """Keep the file's counts of time stamps that went backwards or could not be read."""
        self.store.meta.set(TIME_COUNTS.format(file=path), f"{counts[0]},{counts[1]}")

    def limits_refused(self, characteristic: str) -> str:
        """Why the characteristic's engine refused to set limits for its phase ('' when it
        did not, or limits exist now)."""
        return self.store.meta.get(LIMITS_REFUSED.format(name=characteristic)) or ""

    def set_limits_refused(self, characteristic: str, problem: str) -> None:
        """Remember why limits were refused ('' once they exist or the phase starts afresh)."""
        self.store.meta.set(LIMITS_REFUSED.format(name=characteristic), problem)


def _header(text: str | None) -> tuple[str, ...] | None:
    """A saved header back from its JSON list (None when none was saved or it is unreadable)."""
    if not text:
        return None
    try:
        names = json.loads(text)
    except ValueError:
        return None
    return tuple(str(n) for n in names) if isinstance(names, list) else None
