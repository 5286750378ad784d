"""A line's audit chain as the central database holds it, verified by the same walk as the
line's own (`store.audit.walk_chain`): the entries, their hashes and the recorded head are
those the line wrote, so the verdict is the line's, entry for entry."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import PlantError
from linewatch.plant.schema import SCHEMA
from linewatch.store.audit import AuditEntry, Verdict, walk_chain

if TYPE_CHECKING:
    import psycopg


def central_entries(conn: psycopg.Connection[Any], line: str) -> tuple[list[AuditEntry],
                                                                         str | None]:
    """The line's entries in chain order and its recorded head, read in one snapshot."""
    with conn.transaction():
        conn.execute("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ")
        known = conn.execute(f"SELECT 1 FROM {SCHEMA}.lines WHERE plant_line = %s",
                             (line,)).fetchone()
        if known is None:
            names = [r[0] for r in conn.execute(
                f"SELECT plant_line FROM {SCHEMA}.lines ORDER BY plant_line").fetchall()]
            raise PlantError(f"the plant database has no line {line!r} (it has: "
                             f"{', '.join(names) or 'none yet'})")
        rows = conn.execute(
            f"SELECT seq, at, actor, action, subject, payload, prev_hash, hash, key_id FROM "
            f"{SCHEMA}.audit WHERE plant_line = %s ORDER BY seq", (line,)).fetchall()
        head = conn.execute(
            f"SELECT value FROM {SCHEMA}.meta WHERE plant_line = %s AND key = 'audit_head'",
            (line,)).fetchone()
    return [AuditEntry(*r) for r in rows], (str(head[0]) if head else None)


def verify_central(conn: psycopg.Connection[Any], line: str, key: bytes | None) -> Verdict:
    """The verdict on the line's chain as forwarded (with `key`: its signed entries too)."""
    entries, head = central_entries(conn, line)
    return walk_chain(entries, head, key)
