"""One SQLite file per state directory: opening, permissions, migrations and transactions.

Durability choice: WAL with `synchronous=FULL`. In WAL mode NORMAL already survives a killed
process, but the last commits may roll back after a power cut or an OS crash; an operator's
acknowledgement is exactly the kind of write that must not silently vanish, and the monitor
commits once per batch (not per row), so one fsync per commit costs little.

Everything one processed batch changes — file offsets, engine state, points, limits, feed events,
alarms, audit entries — goes through one `transaction()`, so a crash loses nothing and doubles
nothing: either the whole batch is in the file or none of it is.
"""

from __future__ import annotations

import os
import sqlite3
import threading
import time
from collections.abc import Iterator
from contextlib import contextmanager
from functools import cached_property
from pathlib import Path
from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import StoreError
from linewatch.store.schema import MIGRATIONS

if TYPE_CHECKING:
    from linewatch.store.alarm_rows import AlarmRows
    from linewatch.store.audit import AuditTrail
    from linewatch.store.ingest import IngestState
    from linewatch.store.meta import Meta
    from linewatch.store.points import History
    from linewatch.store.requests import BaselineRequests
    from linewatch.store.stepped_points import SteppedPoints

DB_NAME = "linewatch.db"
BUSY_TIMEOUT_MS = 10_000
PRIVATE_MODES = (0o700, 0o600)  # directory, files: owner only
SHARED_MODES = (0o770, 0o660)  # directory, files: owner and group (a shared line PC)


def _prepare(directory: Path, shared_group: bool) -> Path:
    """Create the directory and an empty database file with the chosen permissions."""
    dir_mode, file_mode = SHARED_MODES if shared_group else PRIVATE_MODES
    try:
        if not directory.exists():
            try:
                directory.mkdir(mode=dir_mode, parents=True)
            except FileExistsError:  # another instance created it at the same moment
                if not directory.is_dir():
                    raise
            else:
                os.chmod(directory, dir_mode)  # mkdir's mode is filtered by the umask
        db = directory / DB_NAME
        if not db.exists():
            fd = os.open(db, os.O_CREAT | os.O_WRONLY, file_mode)
            os.close(fd)
            os.chmod(db, file_mode)  # SQLite gives its -wal and -shm files the same mode
    except OSError as exc:
        raise StoreError(f"cannot create the state directory {directory}: {exc.strerror}") from None
    return db


class Store:
    """The state directory's database. Thread-safe: one connection guarded by a re-entrant lock.

    Use `with store.transaction():` around everything that must land together; transactions
    nest (an inner one joins the outer), and the outermost commits or rolls back.
    """

    def __init__(self, directory: str | Path, *, create: bool = True, shared_group: bool = False):
        self.directory = Path(directory)
        db = self.directory / DB_NAME
        if create:
            db = _prepare(self.directory, shared_group)
        elif not db.is_file():
            raise StoreError(f"{self.directory} is not a linewatch state directory (no {DB_NAME})")
        self.path = db
        self._lock = threading.RLock()
        self._depth = 0
        self._commits = 0
        deadline = time.monotonic() + BUSY_TIMEOUT_MS / 1000
        while True:
            try:
                self._open(db)
                break
            except sqlite3.OperationalError as exc:
                # Two instances opening a new file at the same moment: while one switches it
                # to WAL and migrates, SQLite answers the other "locked" at once, without
                # waiting (it would risk a deadlock). Start again from the connect.
                self._conn.close()
                if not _is_busy(exc) or time.monotonic() > deadline:
                    raise StoreError(f"{db}: not a usable linewatch store ({exc})") from None
                time.sleep(0.05)
            except sqlite3.DatabaseError as exc:
                self._conn.close()
                raise StoreError(f"{db}: not a usable linewatch store ({exc})") from None

    def _open(self, db: Path) -> None:
        """Connect, set the durability pragmas and bring the schema forward."""
        self._conn = sqlite3.connect(
            db, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None, check_same_thread=False
        )
        self._conn.row_factory = sqlite3.Row
        self._conn.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
        self._conn.execute("PRAGMA journal_mode = WAL")
        self._conn.execute("PRAGMA synchronous = FULL")
        self._conn.execute("PRAGMA foreign_keys = ON")
        self._depth = 0
        self._migrate()

    # -- lifecycle --------------------------------------------------------------------------

    def close(self) -> None:
        """Close the connection (idempotent)."""
        with self._lock:
            self._conn.close()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- transactions -----------------------------------------------------------------------

    @contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        """BEGIN IMMEDIATE ... COMMIT (ROLLBACK on any exception); nested calls join the outer."""
        with self._lock:
            if self._depth == 0:
                self._conn.execute("BEGIN IMMEDIATE")
            self._depth += 1
            try:
                yield self._conn
            except BaseException:
                self._depth -= 1
                if self._depth == 0:
                    self._conn.execute("ROLLBACK")
                raise
            self._depth -= 1
            if self._depth == 0:
                self._conn.execute("COMMIT")
                self._commits += 1

    @contextmanager
    def snapshot(self) -> Iterator[sqlite3.Connection]:
        """A read transaction: every query inside sees the same commit, whatever other
        processes write meanwhile (WAL readers keep their snapshot until the end). Inside
        `transaction()` it simply joins it."""
        with self._lock:
            if self._depth > 0:
                yield self._conn
                return
            self._conn.execute("BEGIN DEFERRED")
            self._depth += 1
            try:
                yield self._conn
            finally:
                self._depth -= 1
                self._conn.execute("COMMIT")

    @property
    def in_transaction(self) -> bool:
        """True inside `transaction()` (on this store object)."""
        return self._depth > 0

    def execute(self, sql: str, params: Any = ()) -> sqlite3.Cursor:
        """Run one statement (reads outside a transaction see the latest commit)."""
        with self._lock:
            return self._conn.execute(sql, params)

    def query(self, sql: str, params: Any = ()) -> list[sqlite3.Row]:
        """All rows of one query."""
        with self._lock:
            return self._conn.execute(sql, params).fetchall()

    def data_version(self) -> int:
        """Changes when another connection (another process or Store) commits: poll it cheaply,
        about once a second, to notice acknowledgements made elsewhere."""
        with self._lock:
            return int(self._conn.execute("PRAGMA data_version").fetchone()[0])

    def change_token(self) -> tuple[int, int]:
        """Differs from the previous call's value after any commit, ours or another process's;
        a snapshot source compares it about once a second to know when to rebuild."""
        return (self.data_version(), self._commits)

    # -- migrations -------------------------------------------------------------------------

    @property
    def schema_version(self) -> int:
        """The number of migrations applied."""
        return int(self.query("PRAGMA user_version")[0][0])

    def _migrate(self) -> None:
        """Apply the migrations this file has not seen, each with its version bump, atomically."""
        version = self.schema_version
        if version > len(MIGRATIONS):
            raise StoreError(
                f"{self.path} was written by a newer linewatch (schema {version}, "
                f"this one knows {len(MIGRATIONS)})"
            )
        for number in range(version + 1, len(MIGRATIONS) + 1):
            # executescript commits first; run the statements inside our own transaction.
            with self.transaction() as conn:
                current = int(conn.execute("PRAGMA user_version").fetchone()[0])
                if current >= number:  # another process migrated meanwhile
                    continue
                for statement in split_statements(MIGRATIONS[number - 1]):
                    conn.execute(statement)
                conn.execute(f"PRAGMA user_version = {number}")

    # -- the parts, each in its own module ---------------------------------------------------

    @cached_property
    def ingest(self) -> IngestState:
        """File offsets and per-characteristic engine state."""
        from linewatch.store.ingest import IngestState

        return IngestState(self)

    @cached_property
    def history(self) -> History:
        """Points, limits history, feed events and the characteristics' settings."""
        from linewatch.store.points import History

        return History(self)

    @cached_property
    def alarms(self) -> AlarmRows:
        """Alarm rows (the lifecycle logic lives in linewatch.alarms.lifecycle)."""
        from linewatch.store.alarm_rows import AlarmRows

        return AlarmRows(self)

    @cached_property
    def audit(self) -> AuditTrail:
        """The hash-chained, append-only audit trail."""
        from linewatch.store.audit import AuditTrail

        return AuditTrail(self)

    @cached_property
    def requests(self) -> BaselineRequests:
        """New-baseline requests, from any instance or the shell to the collector."""
        from linewatch.store.requests import BaselineRequests

        return BaselineRequests(self)

    @cached_property
    def stepped(self) -> SteppedPoints:
        """Points of charts whose limits step, each with its own limits."""
        from linewatch.store.stepped_points import SteppedPoints

        return SteppedPoints(self)

    @cached_property
    def meta(self) -> Meta:
        """The few single values of the key-value `meta` table."""
        from linewatch.store.meta import Meta

        return Meta(self)


def _is_busy(exc: sqlite3.OperationalError) -> bool:
    """True for SQLite's "database is locked" / "busy" answers (another connection writes)."""
    text = str(exc).lower()
    return "locked" in text or "busy" in text


def split_statements(script: str) -> list[str]:
    """Statements of a migration script (triggers keep their inner `;` with sqlite3's help)."""
    statements: list[str] = []
    buffer = ""
    for line in script.splitlines(keepends=True):
        buffer += line
        if sqlite3.complete_statement(buffer):
            if buffer.strip():
                statements.append(buffer.strip())
            buffer = ""
    if buffer.strip():
        statements.append(buffer.strip())
    return statements
