"""`linewatch audit verify|export` as real processes; tampering done directly on the SQLite file."""

from __future__ import annotations

import csv
import io
import json
import sqlite3
import time
from datetime import datetime
from pathlib import Path

import pytest
from store_fixtures import line_with_alarms, linewatch

from linewatch.commands.audit import parse_since
from linewatch.errors import LinewatchError
from linewatch.store.db import DB_NAME, Store


@pytest.fixture
def state(tmp_path: Path) -> Path:
    line_with_alarms(tmp_path / "state")
    return tmp_path / "state"


def test_verify_intact_then_broken(state: Path) -> None:
    ok = linewatch("audit", "verify", "--state-dir", str(state))
    assert ok.returncode == 0, ok.stderr
    assert "intact" in ok.stdout
    raw = sqlite3.connect(state / DB_NAME)
    raw.execute("DROP TRIGGER audit_no_update")
    raw.execute("UPDATE audit SET actor = 'somebody else' WHERE seq = 3")
    raw.commit()
    raw.close()
    broken = linewatch("audit", "verify", "--state-dir", str(state))
    assert broken.returncode == 1
    assert "entry 3" in broken.stdout


def test_verify_names_a_deleted_entry(state: Path) -> None:
    raw = sqlite3.connect(state / DB_NAME)
    raw.execute("DROP TRIGGER audit_no_delete")
    raw.execute("DELETE FROM audit WHERE seq = 2")
    raw.commit()
    raw.close()
    broken = linewatch("audit", "verify", "--state-dir", str(state))
    assert broken.returncode == 1 and "entry 2" in broken.stdout


def test_export_jsonl_and_csv(state: Path) -> None:
    with Store(state, create=False) as store:
        count = len(store.audit.entries())
    out = linewatch("audit", "export", "--state-dir", str(state))
    records = [json.loads(x) for x in out.stdout.splitlines()]
    assert [r["seq"] for r in records] == list(range(1, count + 1))
    assert {"raised", "acknowledged", "closed", "returned-to-normal"} <= {
        r["action"] for r in records
    }
    out = linewatch("audit", "export", "--format", "csv", "--state-dir", str(state))
    rows = list(csv.DictReader(io.StringIO(out.stdout)))
    assert len(rows) == count and rows[0]["action"] == "raised"
    assert datetime.fromisoformat(rows[0]["time"]).timestamp() == pytest.approx(1000.0)


def test_export_since(state: Path) -> None:
    with Store(state) as store:  # one entry now; the fixture's are from 1970
        store.audit.append("config-loaded", "line.toml", {"sha256": "0" * 64})
    recent = linewatch("audit", "export", "--since", "8h", "--state-dir", str(state))
    assert [json.loads(x)["action"] for x in recent.stdout.splitlines()] == ["config-loaded"]
    iso = linewatch("audit", "export", "--since", "1970-01-01T00:40:00+00:00",
                    "--state-dir", str(state))
    assert [json.loads(x)["at"] for x in iso.stdout.splitlines()][:1] == [3000.0]
    bad = linewatch("audit", "export", "--since", "yesterday-ish", "--state-dir", str(state))
    assert bad.returncode == 2 and "--since" in bad.stderr


def test_parse_since_forms() -> None:
    now = time.time()
    assert parse_since("8h", now) == now - 8 * 3600
    assert parse_since("2026-03-01T06:00:00+01:00") == datetime.fromisoformat(
        "2026-03-01T05:00:00+00:00"
    ).timestamp()
    with pytest.raises(LinewatchError):
        parse_since("last tuesday")
