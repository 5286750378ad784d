"""The outbox: what a line forwards to the plant's central database, in the order it was
committed, with the position up to which the central database has confirmed it.

Armed only on a line with a plant link: then triggers on each forwarded table append one entry
(the table, the row's key, put or drop) to `outbox` inside the very transaction that changed
the row, so the outbox holds exactly what was committed, whoever committed it (the collector, a
shell command, a viewer). The forwarder reads the rows themselves when it sends them (a row
changed three times before a send goes once, as it is now). Arming also enters every row
already in the store, so a line that joins the plant later sends its history too.

Points and signals pruned from the line's store are not dropped centrally: the central
database keeps a line's history beyond the line PC's own retention.
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import sqlite3

    from linewatch.store.db import Store


@dataclass(frozen=True, slots=True)
class Forwarded:
    """A table the line forwards: its key columns, and whether a deleted row goes too."""

    table: str
    key: tuple[str, ...]
    drops: bool = True


FORWARDED: tuple[Forwarded, ...] = (
    Forwarded("meta", ("key",)),
    Forwarded("characteristics", ("name",)),
    Forwarded("points", ("characteristic", "idx"), drops=False),
    Forwarded("limits", ("id",)),
    Forwarded("feed_events", ("id",)),
    Forwarded("alarms", ("id",)),
    Forwarded("signals", ("characteristic", "idx", "chart", "rule"), drops=False),
    Forwarded("shelves", ("characteristic",)),
    Forwarded("baseline_requests", ("id",)),
    Forwarded("audit", ("seq",)),
)
BY_TABLE = {f.table: f for f in FORWARDED}
PUT, DROP = "put", "drop"
STORE_ID_KEY = "plant-store-id"
LINK_KEY = "plant-link"  # the link's state (JSON), for every face of this line
_TRIGGER_PREFIX = "outbox_"


@dataclass(frozen=True, slots=True)
class Entry:
    """One outbox entry: its sequence number, table, key values and operation."""

    seq: int
    table: str
    key: tuple[object, ...]
    op: str


def _key_json(forwarded: Forwarded, row: str) -> str:
    return "json_array(" + ", ".join(f"{row}.{c}" for c in forwarded.key) + ")"


LOCAL_META = "plant-"  # meta keys with this prefix are the link's own, never forwarded


def _triggers(f: Forwarded) -> list[str]:
    """The CREATE TRIGGER statements that enter `f`'s changes in the outbox."""
    new_when = old_when = ""
    if f.table == "meta":
        new_when = f" WHEN substr(NEW.key, 1, {len(LOCAL_META)}) != '{LOCAL_META}'"
        old_when = f" WHEN substr(OLD.key, 1, {len(LOCAL_META)}) != '{LOCAL_META}'"
    put = (f"INSERT INTO outbox (tbl, key, op) VALUES ('{f.table}', {_key_json(f, 'NEW')}, "
           f"'{PUT}');")
    statements = [
        f"CREATE TRIGGER IF NOT EXISTS {_TRIGGER_PREFIX}{f.table}_insert AFTER INSERT ON "
        f"{f.table}{new_when} BEGIN {put} END",
        f"CREATE TRIGGER IF NOT EXISTS {_TRIGGER_PREFIX}{f.table}_update AFTER UPDATE ON "
        f"{f.table}{new_when} BEGIN {put} END",
    ]
    if f.drops:
        drop = (f"INSERT INTO outbox (tbl, key, op) VALUES ('{f.table}', "
                f"{_key_json(f, 'OLD')}, '{DROP}');")
        statements.append(
            f"CREATE TRIGGER IF NOT EXISTS {_TRIGGER_PREFIX}{f.table}_delete AFTER DELETE ON "
            f"{f.table}{old_when} BEGIN {drop} END")
    return statements


class Outbox:
    """The `outbox` and `outbox_position` tables of one store."""

    def __init__(self, store: Store) -> None:
        self.store = store

    def armed(self) -> bool:
        """True when the store enters its changes in the outbox (a plant link is set up)."""
        rows = self.store.query(
            "SELECT COUNT(*) FROM sqlite_master WHERE type = 'trigger' AND name LIKE ?",
            (_TRIGGER_PREFIX + "%",))
        return int(rows[0][0]) > 0

    def arm(self, now: float | None = None, *, resend: bool = False) -> int:
        """Start entering changes (idempotent); on first arming (or with `resend`: the central
        database lost what it had) also enter every row already stored, table by table in key
        order. Returns how many rows were entered."""
        now = time.time() if now is None else now
        entered = 0
        with self.store.transaction() as conn:
            fresh = not self.armed()
            for f in FORWARDED:
                for statement in _triggers(f):
                    conn.execute(statement)
            if fresh or resend:
                conn.execute("DELETE FROM outbox")
                for f in FORWARDED:
                    keys = ", ".join(f.key)
                    where = (f" WHERE substr(key, 1, {len(LOCAL_META)}) != '{LOCAL_META}'"
                             if f.table == "meta" else "")
                    entered += conn.execute(
                        f"INSERT INTO outbox (tbl, key, op) SELECT '{f.table}', "
                        f"json_array({keys}), '{PUT}' FROM {f.table}{where} ORDER BY {keys}"
                    ).rowcount
                conn.execute(
                    "UPDATE outbox_position SET armed_at = ?, sent = 0 WHERE id = 1", (now,))
        return entered

    def store_id(self) -> str:
        """This store's own id (made once), telling the central database which store feeds
        a line."""
        import uuid

        with self.store.transaction():
            known = self.store.meta.get(STORE_ID_KEY)
            if known:
                return known
            made = uuid.uuid4().hex
            self.store.meta.set(STORE_ID_KEY, made)
        return made

    def disarm(self) -> None:
        """Stop entering changes and forget the outbox (the line left the plant)."""
        with self.store.transaction() as conn:
            names = [r[0] for r in conn.execute(
                "SELECT name FROM sqlite_master WHERE type = 'trigger' AND name LIKE ?",
                (_TRIGGER_PREFIX + "%",))]
            for name in names:
                conn.execute(f"DROP TRIGGER IF EXISTS {name}")
            conn.execute("DELETE FROM outbox")
            conn.execute("UPDATE outbox_position SET sent = 0, armed_at = NULL WHERE id = 1")

    def position(self) -> int:
        """The newest entry the central database has confirmed (0: none)."""
        rows = self.store.query("SELECT sent FROM outbox_position WHERE id = 1")
        return int(rows[0][0]) if rows else 0

    def newest(self) -> int:
        """The newest entry's sequence number (0: the outbox is empty)."""
        rows = self.store.query("SELECT MAX(seq) FROM outbox")
        return int(rows[0][0] or 0)

    def waiting(self) -> int:
        """Entries not yet confirmed by the central database."""
        with self.store.snapshot() as conn:
            sent = conn.execute("SELECT sent FROM outbox_position WHERE id = 1").fetchone()
            row = conn.execute("SELECT COUNT(*) FROM outbox WHERE seq > ?",
                               (int(sent[0]) if sent else 0,)).fetchone()
        return int(row[0])

    def after(self, position: int, limit: int) -> list[Entry]:
        """Up to `limit` entries after `position`, oldest first."""
        import json

        rows = self.store.query(
            "SELECT seq, tbl, key, op FROM outbox WHERE seq > ? ORDER BY seq LIMIT ?",
            (position, limit))
        return [Entry(int(r[0]), str(r[1]), tuple(json.loads(r[2])), str(r[3])) for r in rows]

    def confirm(self, position: int) -> None:
        """The central database holds everything up to `position`: keep that, drop those
        entries (they are never needed again)."""
        with self.store.transaction() as conn:
            conn.execute("UPDATE outbox_position SET sent = max(sent, ?) WHERE id = 1",
                         (position,))
            conn.execute("DELETE FROM outbox WHERE seq <= ?", (position,))

    def rows(self, conn: sqlite3.Connection, table: str, keys: list[tuple[object, ...]]) -> (
        list[sqlite3.Row]
    ):
        """The current rows of `table` with these keys (those still there)."""
        import json

        f = BY_TABLE[table]
        if not keys:
            return []
        columns = ", ".join(f.key)
        picks = ", ".join(f"json_extract(value, '$[{i}]')" for i in range(len(f.key)))
        lhs = f"({columns})" if len(f.key) > 1 else columns
        return conn.execute(
            f"SELECT * FROM {table} WHERE {lhs} IN (SELECT {picks} FROM json_each(?))",
            (json.dumps([list(k) for k in keys]),)).fetchall()
