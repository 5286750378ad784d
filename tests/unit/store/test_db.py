"""The store file: permissions, migrations, pragmas, transactions, cross-process change notice."""

from __future__ import annotations

import os
import sqlite3
import stat
import subprocess
import sys
from pathlib import Path

import pytest

from linewatch.domain.errors import LinewatchError
from linewatch.domain.records import FeedEvent
from linewatch.runtime.statedir import open_store
from linewatch.store.db import DB_NAME, Store
from linewatch.store.schema import MIGRATIONS


def mode(path: Path) -> int:
    return stat.S_IMODE(path.stat().st_mode)


def test_new_state_directory_is_owner_only(tmp_path: Path) -> None:
    old = os.umask(0o022)  # a permissive umask must not leak group/other bits
    try:
        directory = tmp_path / "state" / "line1"
        with Store(directory) as store:
            store.history.add_feed_event(FeedEvent("appeared", "a.csv"))
            assert mode(directory) == 0o700
            for name in (DB_NAME, DB_NAME + "-wal", DB_NAME + "-shm"):
                assert mode(directory / name) == 0o600, name
    finally:
        os.umask(old)


def test_shared_group_option_opens_to_the_group(tmp_path: Path) -> None:
    directory = tmp_path / "shared"
    with Store(directory, shared_group=True) as store:
        store.history.add_feed_event(FeedEvent("appeared", "a.csv"))
        assert mode(directory) == 0o770
        for name in (DB_NAME, DB_NAME + "-wal"):
            assert mode(directory / name) == 0o660, name


def test_migrations_build_the_schema_from_an_empty_directory(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as store:
        assert store.schema_version == len(MIGRATIONS)
        tables = {r[0] for r in store.query("SELECT name FROM sqlite_master WHERE type='table'")}
    assert {"files", "engine_state", "points", "limits", "feed_events", "alarms", "audit",
            "lease", "meta", "characteristics"} <= tables
    # Opening again applies nothing twice and keeps the data.
    with Store(tmp_path / "s") as again:
        assert again.schema_version == len(MIGRATIONS)


def test_an_older_store_is_migrated_forward_keeping_its_data(tmp_path: Path) -> None:
    from linewatch.store.db import split_statements

    directory = tmp_path / "old"
    directory.mkdir()
    raw = sqlite3.connect(directory / DB_NAME)
    for statement in split_statements(MIGRATIONS[0]):  # a store as version 1 wrote it
        raw.execute(statement)
    raw.execute("PRAGMA user_version = 1")
    raw.execute("INSERT INTO feed_events (at, kind, file) VALUES (1.0, 'appeared', 'a.csv')")
    raw.commit()
    raw.close()
    with Store(directory, create=False) as store:
        assert store.schema_version == len(MIGRATIONS)
        indexes = {r[0] for r in store.query("SELECT name FROM sqlite_master WHERE type='index'")}
        assert "points_by_characteristic_time" in indexes and "points_by_time" not in indexes
        assert [e.event.kind for e in store.history.feed_events()] == ["appeared"]


def test_a_store_from_a_newer_linewatch_is_refused(tmp_path: Path) -> None:
    with Store(tmp_path / "s"):
        pass
    raw = sqlite3.connect(tmp_path / "s" / DB_NAME)
    raw.execute(f"PRAGMA user_version = {len(MIGRATIONS) + 1}")
    raw.close()
    with pytest.raises(LinewatchError, match="newer linewatch"):
        Store(tmp_path / "s")


def test_pragmas_chosen_for_durability(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as store:
        assert store.query("PRAGMA journal_mode")[0][0] == "wal"
        assert store.query("PRAGMA synchronous")[0][0] == 2  # FULL (SQLite documentation)
        assert store.query("PRAGMA foreign_keys")[0][0] == 1
        assert store.query("PRAGMA busy_timeout")[0][0] >= 1000


def test_folder_without_a_store_is_not_a_state_directory(tmp_path: Path) -> None:
    with pytest.raises(LinewatchError, match="is not a linewatch state directory"):
        open_store(tmp_path, create=False)
    with pytest.raises(LinewatchError, match="is not a linewatch state directory"):
        open_store(tmp_path / "missing", create=False)
    assert not (tmp_path / DB_NAME).exists()  # looking did not create anything


def test_garbage_database_file_is_a_clear_error(tmp_path: Path) -> None:
    (tmp_path / DB_NAME).write_bytes(b"this is not sqlite at all" * 100)
    with pytest.raises(LinewatchError, match="not a usable linewatch store"):
        open_store(tmp_path, create=False)


def test_failed_transaction_leaves_nothing_behind(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as store:
        with pytest.raises(RuntimeError), store.transaction():
            store.history.add_feed_event(FeedEvent("appeared", "a.csv"))
            with store.transaction():  # nested: joins the outer one
                store.history.add_feed_event(FeedEvent("rotated", "a.csv"))
            raise RuntimeError("crash in the middle of a batch")
        assert store.history.feed_events() == []
        with store.transaction():
            store.history.add_feed_event(FeedEvent("appeared", "a.csv"))
            store.history.add_feed_event(FeedEvent("rotated", "a.csv"))
        assert [e.event.kind for e in store.history.feed_events()] == ["appeared", "rotated"]


def test_another_process_commit_changes_data_version(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as store:
        before = store.data_version()
        assert store.data_version() == before  # nothing happened
        code = (
            "import sys; from linewatch.store.db import Store; "
            "from linewatch.domain.records import FeedEvent; "
            "s = Store(sys.argv[1], create=False); s.history.add_feed_event(FeedEvent('x', 'f'))"
        )
        token = store.change_token()
        subprocess.run([sys.executable, "-c", code, str(tmp_path / "s")], check=True)
        assert store.data_version() != before
        assert store.change_token() != token
        token = store.change_token()
        store.history.add_feed_event(FeedEvent("y", "f"))  # our own commit changes it too
        assert store.change_token() != token
        assert [e.event.kind for e in store.history.feed_events()] == ["x", "y"]


_OPEN_AT = """
import sys, time
from linewatch.store.db import Store
go = float(sys.argv[2])
while time.time() < go:
    pass
try:
    Store(sys.argv[1]).close()
except Exception as exc:
    print(f"{type(exc).__name__}: {exc}")
    sys.exit(1)
"""


def test_instances_creating_one_state_directory_at_the_same_moment_all_open_it(
    tmp_path: Path,
) -> None:
    """Two or three instances started together on a new state directory used to fail with
    "File exists" (the mkdir race) or "database is locked" (the WAL switch and migration)."""
    import time

    failures: list[str] = []
    for round_ in range(12):
        directory = tmp_path / f"line{round_}" / "state"
        go = time.time() + 1.0  # after the imports, so the opens really coincide
        procs = [
            subprocess.Popen([sys.executable, "-c", _OPEN_AT, str(directory), repr(go)],
                             stdout=subprocess.PIPE, text=True)
            for _ in range(3)
        ]
        for p in procs:
            out, _ = p.communicate(timeout=60)
            if p.returncode:
                failures.append(out.strip())
        with Store(directory, create=False) as store:
            assert store.schema_version == len(MIGRATIONS)
    assert failures == []
