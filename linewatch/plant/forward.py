"""One line's exchange with the central database: send the outbox in order, in batches, each
batch in one central transaction keyed by (line, outbox position), so a batch sent twice
(the line crashed before it noted the confirmation, the link dropped after the commit) is
applied once; read the requests left for the line and settle them.

The line's rows are read when they are sent (the state committed now, through the outbox's own
SQLite connection), never held in memory across a failure: whatever breaks, the next attempt
starts again from what both sides have committed.
"""

from __future__ import annotations

import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import PlantError
from linewatch.plant.schema import CHANGES_CHANNEL, REQUESTS_CHANNEL, SCHEMA
from linewatch.store.outbox import BY_TABLE, DROP, FORWARDED, Outbox

if TYPE_CHECKING:
    import psycopg

    from linewatch.store.db import Store

BATCH = 2000  # outbox entries per central transaction
HEARTBEAT = 5.0  # seconds between "still here" updates of an idle line
CONFIRM_EVERY = 2.0  # seconds between notes of the confirmed position in the line's store
REPLACEMENT = "\ufffd"  # PostgreSQL text cannot hold NUL; the line's store can


@dataclass(frozen=True, slots=True)
class CentralRequest:
    """A request left for this line in the central database."""

    id: int
    action: str
    alarm_id: int | None
    characteristic: str | None
    reason: str
    note: str
    seconds: float | None
    start_index: int | None
    actor: str
    host: str
    asked_at: float


@contextmanager
def _link_errors(url: str) -> Iterator[None]:
    """A database or network error of the link as a PlantError (password hidden)."""
    import psycopg

    from linewatch.plant.central import problem

    try:
        yield
    except psycopg.Error as exc:
        raise PlantError(problem(exc, url)) from None
    except OSError as exc:
        raise PlantError(problem(exc, url)) from None


def _clean(value: Any) -> Any:
    return value.replace("\x00", REPLACEMENT) if isinstance(value, str) and "\x00" in value \
        else value


class LineLink:
    """The central side of one line, over one connection (open, send, requests, close)."""

    def __init__(self, store: Store, url: str, line: str, host: str, *,
                 batch: int = BATCH) -> None:
        self.store = store
        self.outbox = Outbox(store)
        self.url = url
        self.line = line
        self.host = host
        self.batch = batch
        self.conn: psycopg.Connection[Any] | None = None
        self.position = 0
        self._columns = {f.table: [str(r[1]) for r in store.query(
            f"PRAGMA table_info({f.table})")] for f in FORWARDED}
        self._upserts = {f.table: self._upsert_sql(f.table) for f in FORWARDED}
        self._last_contact = 0.0
        self._confirmed_at = 0.0
        self.requests_due = True  # look once at the start, then on each notification

    # -- connection ------------------------------------------------------------------------

    def open(self, now: float) -> None:
        """Connect, check the schema, claim the line for this store, and agree on where the
        outbox stands; PlantError when the line belongs to another store."""
        from linewatch.plant.central import connect

        self.close()
        conn = connect(self.url, autocommit=True)
        try:
            with _link_errors(self.url):
                self._claim(conn, now)
        except BaseException:
            conn.close()
            raise
        self.conn = conn
        self._last_contact = now
        self.requests_due = True

    def _claim(self, conn: psycopg.Connection[Any], now: float) -> None:
        """Check the schema, claim the line, agree on the outbox position, LISTEN."""
        from linewatch.plant.central import require_current

        require_current(conn, self.url)
        store_id = self.outbox.store_id()
        with conn.transaction():
            conn.execute(
                f"INSERT INTO {SCHEMA}.lines (plant_line, host, first_seen, last_contact, "
                "store_id) VALUES (%s, %s, %s, %s, %s) ON CONFLICT (plant_line) DO NOTHING",
                (self.line, self.host, now, now, store_id))
            row = conn.execute(
                f"SELECT forwarded_seq, store_id FROM {SCHEMA}.lines WHERE plant_line = %s "
                "FOR UPDATE", (self.line,)).fetchone()
            assert row is not None
            central, owner = int(row[0]), row[1]
            if owner is not None and owner != store_id:
                raise PlantError(
                    f"the plant database already has a line {self.line!r} fed by another "
                    "line store: give this line its own [plant] line name")
            conn.execute(
                f"UPDATE {SCHEMA}.lines SET host = %s, last_contact = %s, store_id = %s "
                "WHERE plant_line = %s", (self.host, now, store_id, self.line))
        if central < self.outbox.position():  # the central database lost what it had
            self.outbox.arm(now, resend=True)  # (restored from a backup, replaced)
        self.position = central  # at or past what this line noted as confirmed
        conn.execute(f"LISTEN {REQUESTS_CHANNEL}")

    def close(self) -> None:
        """Drop the connection (idempotent)."""
        if self.conn is not None:
            import contextlib

            with contextlib.suppress(Exception):
                self.conn.close()
            self.conn = None

    @property
    def is_open(self) -> bool:
        return self.conn is not None and not self.conn.closed

    def wait(self, timeout: float) -> None:
        """Wait up to `timeout` seconds for a request notification; one for this line (also
        one that came while a batch was sent: psycopg keeps those) makes `requests_due`."""
        assert self.conn is not None
        with _link_errors(self.url):
            for notify in self.conn.notifies(timeout=timeout, stop_after=1):
                if notify.channel == REQUESTS_CHANNEL and notify.payload == self.line:
                    self.requests_due = True

    # -- sending ---------------------------------------------------------------------------

    def _upsert_sql(self, table: str) -> str:
        columns = ["plant_line", *self._columns[table], "fwd_seq"]
        key = ["plant_line", *BY_TABLE[table].key]
        marks = ", ".join(["%s"] * len(columns))
        head = (f"INSERT INTO {SCHEMA}.{table} ({', '.join(columns)}) VALUES ({marks}) "
                f"ON CONFLICT ({', '.join(key)}) DO ")
        if table == "audit":  # the central copy of a chain is never rewritten
            return head + "NOTHING"
        rest = [c for c in columns if c not in key]
        return head + "UPDATE SET " + ", ".join(f"{c} = excluded.{c}" for c in rest)

    def _delete_sql(self, table: str) -> str:
        key = BY_TABLE[table].key
        return (f"DELETE FROM {SCHEMA}.{table} WHERE plant_line = %s AND "
                + " AND ".join(f"{c} = %s" for c in key))

    def send(self, now: float) -> int:
        """Send the next batch of the outbox; returns how many entries went (0: nothing was
        waiting; an idle line still tells the central database it is there, now and then)."""
        with _link_errors(self.url):
            return self._send(now)

    def _send(self, now: float) -> int:
        assert self.conn is not None
        entries = self.outbox.after(self.position, self.batch)
        if not entries:
            if now - self._confirmed_at >= CONFIRM_EVERY:
                self.confirm(now)
            if now - self._last_contact >= HEARTBEAT:
                self.conn.execute(
                    f"UPDATE {SCHEMA}.lines SET last_contact = %s, waiting = 0 "
                    "WHERE plant_line = %s", (now, self.line))
                self._last_contact = now
            return 0
        last = entries[-1].seq
        final: dict[str, dict[tuple[object, ...], tuple[int, str]]] = {}
        for e in entries:
            final.setdefault(e.table, {})[e.key] = (e.seq, e.op)
        puts: dict[str, list[tuple[Any, ...]]] = {}
        drops: dict[str, list[tuple[object, ...]]] = {}
        newest_data: float | None = None
        with self.store.snapshot() as lite:
            newest_local = self.outbox.newest()
            for table, changes in final.items():
                wanted = [k for k, (_s, op) in changes.items() if op != DROP]
                found = {}
                key_at = [self._columns[table].index(c) for c in BY_TABLE[table].key]
                for stored in self.outbox.rows(lite, table, wanted):
                    values = tuple(stored)
                    found[tuple(values[i] for i in key_at)] = values
                for k, (seq, op) in changes.items():
                    now_held = found.get(k) if op != DROP else None
                    if now_held is not None:
                        puts.setdefault(table, []).append(
                            (self.line, *(_clean(v) for v in now_held), seq))
                    elif BY_TABLE[table].drops:  # dropped (or gone since): gone centrally too
                        drops.setdefault(table, []).append((self.line, *k))
            if "points" in puts:
                at = self._columns["points"].index("received_at") + 1
                newest_data = max(float(p[at]) for p in puts["points"])
        with self.conn.transaction():
            row = self.conn.execute(
                f"SELECT forwarded_seq FROM {SCHEMA}.lines WHERE plant_line = %s FOR UPDATE",
                (self.line,)).fetchone()
            applied = int(row[0]) if row else 0
            if applied < last:  # else: this batch was applied before (a retry)
                with self.conn.cursor() as cur:
                    for f in FORWARDED:
                        if f.table in puts:
                            cur.executemany(self._upserts[f.table], puts[f.table])
                        if f.table in drops:
                            cur.executemany(self._delete_sql(f.table), drops[f.table])
            self.conn.execute(
                f"UPDATE {SCHEMA}.lines SET forwarded_seq = greatest(forwarded_seq, %s), "
                "last_contact = %s, waiting = %s, newest_data = greatest(newest_data, %s) "
                "WHERE plant_line = %s",
                (last, now, max(0, newest_local - last), newest_data, self.line))
            self.conn.execute("SELECT pg_notify(%s, %s)", (CHANGES_CHANNEL, self.line))
        self.position = last
        self._last_contact = now
        if now - self._confirmed_at >= CONFIRM_EVERY:
            self.confirm(now)
        return len(entries)

    def confirm(self, now: float | None = None) -> None:
        """Note in the line's store how far the central database has confirmed, and drop
        those entries. Done every CONFIRM_EVERY seconds, not per batch: each is a durable
        write the collector's own commits would queue behind, and the central database's
        position (read on every connect) is the authority anyway."""
        if self.position > self.outbox.position():
            self.outbox.confirm(self.position)
        self._confirmed_at = time.time() if now is None else now

    # -- requests --------------------------------------------------------------------------

    def pending(self) -> list[CentralRequest]:
        """Requests for this line not yet settled, oldest first."""
        assert self.conn is not None
        self.requests_due = False
        with _link_errors(self.url):
            rows = self.conn.execute(
                f"SELECT id, action, alarm_id, characteristic, reason, note, seconds, "
                f"start_index, actor, host, asked_at FROM {SCHEMA}.requests WHERE plant_line = "
                "%s AND state = 'pending' ORDER BY id", (self.line,)).fetchall()
        return [CentralRequest(*r) for r in rows]

    def settle(self, request_id: int, state: str, result: str, at: float) -> None:
        """Write back what became of a request (only one still pending changes)."""
        assert self.conn is not None
        with _link_errors(self.url):
            self.conn.execute(
                f"UPDATE {SCHEMA}.requests SET state = %s, result = %s, settled_at = %s "
                "WHERE id = %s AND plant_line = %s AND state = 'pending'",
                (state, result, at, request_id, self.line))


def ask(conn: psycopg.Connection[Any], line: str, action: str, *, actor: str, host: str,
        alarm_id: int | None = None, characteristic: str | None = None, reason: str = "",
        note: str = "", seconds: float | None = None, start_index: int | None = None,
        now: float | None = None) -> int:
    """Leave a request for `line` (what a central board or browser does); returns its id. The
    line's collector carries it out when it is connected, so it waits while the line is not."""
    now = time.time() if now is None else now
    row = conn.execute(
        f"INSERT INTO {SCHEMA}.requests (plant_line, action, alarm_id, characteristic, reason, "
        "note, seconds, start_index, actor, host, asked_at) VALUES "
        "(%s, %s, %s, %s, %s, %s, %s, %s, %s, %s, %s) RETURNING id",
        (line, action, alarm_id, characteristic, reason, note, seconds, start_index, actor,
         host, now)).fetchone()
    if not conn.autocommit:
        conn.commit()
    assert row is not None
    return int(row[0])


def iter_rows(conn: psycopg.Connection[Any], table: str, line: str) -> Iterator[tuple[Any, ...]]:
    """A line's central rows of one forwarded table, in key order, without plant_line and
    fwd_seq: comparable with the line store's own rows."""
    f = BY_TABLE[table]
    columns = [r[0] for r in conn.execute(
        "SELECT column_name FROM information_schema.columns WHERE table_schema = %s AND "
        "table_name = %s ORDER BY ordinal_position", (SCHEMA, table)).fetchall()][1:-1]
    with conn.cursor() as cur:
        cur.execute(f"SELECT {', '.join(columns)} FROM {SCHEMA}.{table} WHERE plant_line = %s "
                    f"ORDER BY {', '.join(f.key)}", (line,))
        yield from cur
