"""The connection to the central database and its schema: `connect`, `migrate` (what
`linewatch plant init` runs) and `schema_version`.

psycopg is imported here, lazily, so that nothing on a line without a plant link loads it.
Every error that leaves this module is a `PlantError` whose text has the URL's password hidden.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import PlantError
from linewatch.plant.schema import MIGRATIONS, SCHEMA
from linewatch.plant.url import redact, redact_text

if TYPE_CHECKING:
    import psycopg

CONNECT_TIMEOUT = 5  # seconds; a line must notice a dead link quickly
_MIGRATION_LOCK = 0x6C696E65  # advisory lock key: one `plant init` migrates at a time


def connect(url: str, *, autocommit: bool = False, timeout: float = CONNECT_TIMEOUT) -> (
    psycopg.Connection[Any]
):
    """A connection to the central database; PlantError (password hidden) when refused."""
    try:
        import psycopg
    except ImportError:  # pragma: no cover - psycopg is a dependency
        raise PlantError("the plant link needs psycopg 3 (pip install 'psycopg[binary]')") from None
    try:
        return psycopg.connect(url, autocommit=autocommit, connect_timeout=max(1, int(timeout)),
                               application_name="linewatch")
    except psycopg.Error as exc:
        raise PlantError(f"cannot reach the plant database {redact(url)}: "
                         f"{problem(exc, url)}") from None
    except ValueError as exc:  # a malformed URL or connection string
        raise PlantError(f"not a usable plant database URL {redact(url)}: "
                         f"{problem(exc, url)}") from None


@contextmanager
def session(url: str, *, autocommit: bool = False) -> Iterator[psycopg.Connection[Any]]:
    """`connect`, closed on the way out; a database error inside becomes a PlantError."""
    import psycopg

    conn = connect(url, autocommit=autocommit)
    try:
        yield conn
    except psycopg.Error as exc:
        raise PlantError(f"the plant database {redact(url)}: "
                         f"{problem(exc, url)}") from None
    finally:
        conn.close()


def problem(exc: BaseException, url: str | None) -> str:
    """A database error as one line, the URL's password hidden."""
    return " ".join(redact_text(str(exc), url).split()) or type(exc).__name__


def schema_version(conn: psycopg.Connection[Any]) -> int:
    """Migrations applied to the central database (0: never initialised)."""
    row = conn.execute(
        "SELECT to_regclass(%s) IS NOT NULL", (f"{SCHEMA}.plant_schema",)).fetchone()
    if not row or not row[0]:
        return 0
    got = conn.execute(f"SELECT version FROM {SCHEMA}.plant_schema WHERE id = 1").fetchone()
    return int(got[0]) if got else 0


def migrate(conn: psycopg.Connection[Any]) -> tuple[int, int]:
    """Create the schema or bring it forward, each migration with its version in one
    transaction; returns (version before, version now). Idempotent, and safe when several
    run at once (an advisory lock makes them take turns)."""
    with conn.transaction():
        conn.execute("SELECT pg_advisory_xact_lock(%s)", (_MIGRATION_LOCK,))
        conn.execute(f"CREATE SCHEMA IF NOT EXISTS {SCHEMA}")
        conn.execute(
            f"CREATE TABLE IF NOT EXISTS {SCHEMA}.plant_schema ("
            "id integer PRIMARY KEY CHECK (id = 1), version integer NOT NULL, "
            "migrated_at timestamptz NOT NULL DEFAULT now())")
        before = schema_version(conn)
        if before > len(MIGRATIONS):
            raise PlantError(
                f"the plant database was set up by a newer linewatch (schema {before}, this "
                f"one knows {len(MIGRATIONS)})")
        for number in range(before + 1, len(MIGRATIONS) + 1):
            conn.execute(MIGRATIONS[number - 1].encode())
            conn.execute(
                f"INSERT INTO {SCHEMA}.plant_schema (id, version) VALUES (1, %s) "
                "ON CONFLICT (id) DO UPDATE SET version = excluded.version, migrated_at = now()",
                (number,))
    return before, len(MIGRATIONS)


def require_current(conn: psycopg.Connection[Any], url: str) -> None:
    """PlantError unless the central schema is the one this linewatch writes."""
    version = schema_version(conn)
    if version == 0:
        raise PlantError(f"the plant database {redact(url)} is not set up: run "
                         "`linewatch plant init URL` once")
    if version != len(MIGRATIONS):
        newer = version > len(MIGRATIONS)
        raise PlantError(
            f"the plant database {redact(url)} has schema {version}, this linewatch "
            f"{'is older' if newer else 'needs'} {len(MIGRATIONS)}"
            f"{'' if newer else ': run `linewatch plant init URL`'}")
