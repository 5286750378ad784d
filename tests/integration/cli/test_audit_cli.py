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

from linewatch.domain.clock import parse_since
from linewatch.domain.errors import LinewatchError
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


# -- anchors and the key, as a user runs them ---------------------------------------------------

def emptied(state: Path) -> None:
    """The store truncated to 0 bytes while nothing runs (WAL side files gone with it)."""
    (state / DB_NAME).write_bytes(b"")
    for extra in ("-wal", "-shm"):
        (state / (DB_NAME + extra)).unlink(missing_ok=True)


def test_verify_says_which_check_it_made(state: Path) -> None:
    out = linewatch("audit", "verify", "--state-dir", str(state))
    assert out.returncode == 0 and "checked: chain only" in out.stdout


@pytest.mark.parametrize("fmt", ["markdown", "html", "csv"])
def test_a_shift_report_is_an_anchor_that_reveals_an_emptied_store(
    state: Path, tmp_path: Path, fmt: str
) -> None:
    report = tmp_path / f"shift.{fmt}"
    made = linewatch("report", "--format", fmt, "-o", str(report), "--state-dir", str(state))
    assert made.returncode == 0, made.stderr
    same = linewatch("audit", "verify", "--anchor", str(report), "--state-dir", str(state))
    assert same.returncode == 0, same.stdout
    assert "checked: chain + anchors" in same.stdout
    emptied(state)
    chain_only = linewatch("audit", "verify", "--state-dir", str(state))
    assert chain_only.returncode == 0  # what a chain alone cannot see
    anchored = linewatch("audit", "verify", "--anchor", str(report), "--state-dir", str(state))
    assert anchored.returncode == 1
    assert "BROKEN at entry 1" in anchored.stdout and "the trail holds 0" in anchored.stdout


def test_an_anchor_argument_without_anchors_is_a_user_error(state: Path, tmp_path: Path) -> None:
    other = tmp_path / "notes.txt"
    other.write_text("nothing here\n")
    out = linewatch("audit", "verify", "--anchor", str(other), "--state-dir", str(state))
    assert out.returncode == 2 and "holds no audit anchor" in out.stderr
    out = linewatch("audit", "verify", "--anchor", str(tmp_path / "nosuch"),
                    "--state-dir", str(state))
    assert out.returncode == 2 and "cannot read" in out.stderr


def keyed_line(tmp_path: Path) -> Path:
    """A config whose anchor file and key lie outside the state directory."""
    (tmp_path / "keys").mkdir()
    (tmp_path / "keys" / "audit.key").write_text("a-key-of-at-least-16-bytes\n")
    config = tmp_path / "line.toml"
    config.write_text(
        '[monitor]\nstate_dir = "state"\naudit_anchor_file = "anchors.log"\n'
        'audit_anchor_every = 0\naudit_key_file = "keys/audit.key"\n'
    )
    return config


def test_with_a_key_acknowledgements_are_signed_and_a_keyless_one_is_refused(
    tmp_path: Path,
) -> None:
    config = keyed_line(tmp_path)
    line_with_alarms(tmp_path / "state")  # keyless entries: verifiable beside signed ones
    ok = linewatch("alarms", "ack", "2", "--reason", "tool wear", "-c", str(config))
    assert ok.returncode == 0, ok.stderr
    refused = linewatch("alarms", "ack", "3", "--reason", "tool wear",
                        "--state-dir", str(tmp_path / "state"))
    assert refused.returncode == 2 and "signed with a key" in refused.stderr
    keyed = linewatch("audit", "verify", "-c", str(config))
    assert keyed.returncode == 0 and "checked: chain + key" in keyed.stdout
    assert "1 signed entry checks out" in keyed.stdout  # the one acknowledgement
    report = linewatch("report", "-c", str(config), "-o", str(tmp_path / "r.md"))
    assert report.returncode == 0, report.stderr
    anchors = (tmp_path / "anchors.log").read_text()
    assert anchors.count("linewatch-audit-anchor v1") == 1 and "why=report" in anchors
    full = linewatch("audit", "verify", "-c", str(config),
                     "--anchor", str(tmp_path / "anchors.log"))
    assert full.returncode == 0 and "checked: chain + key + anchors" in full.stdout


def test_an_anchor_file_inside_the_state_directory_is_refused(tmp_path: Path) -> None:
    config = tmp_path / "line.toml"
    config.write_text('[monitor]\nstate_dir = "state"\naudit_anchor_file = "state/a.log"\n')
    Store(tmp_path / "state").close()
    out = linewatch("audit", "verify", "-c", str(config))
    assert out.returncode == 2
    assert "monitor.audit_anchor_file" in out.stderr and "inside the state directory" in out.stderr


# -- the configured anchor file, read by `verify` without --anchor -------------------------------

def anchored_line(tmp_path: Path) -> Path:
    """A line whose config names an anchor file; a report has written one anchor to it."""
    config = tmp_path / "line.toml"
    config.write_text('[monitor]\nstate_dir = "state"\naudit_anchor_file = "trail/anchors.log"\n')
    (tmp_path / "trail").mkdir()
    line_with_alarms(tmp_path / "state")
    made = linewatch("report", "-c", str(config), "-o", str(tmp_path / "shift.md"))
    assert made.returncode == 0, made.stderr
    return config


def test_verify_compares_with_the_configured_anchor_file_and_says_so(tmp_path: Path) -> None:
    config = anchored_line(tmp_path)
    with Store(tmp_path / "state", create=False) as store:
        entries, _ = store.audit.head()
    out = linewatch("audit", "verify", "-c", str(config))
    assert out.returncode == 0, out.stdout
    assert "checked: chain + anchors" in out.stdout
    lines = out.stdout.splitlines()
    anchors = next(x for x in lines if x.strip().startswith("anchors:"))
    assert str(tmp_path / "trail" / "anchors.log") in anchors and "configured" in anchors
    assert "1 anchor" in anchors and f"latest ({entries} entries" in anchors
    assert "matches" in anchors
    key = next(x for x in lines if x.strip().startswith("key:"))
    assert "no key" in key and "re-hash" in key


def test_a_store_emptied_with_a_configured_anchor_file_is_broken(tmp_path: Path) -> None:
    """Truncated to 0 bytes while stopped: the chain alone sees an empty, intact trail; the
    configured anchor file still records the entries, so verify fails without being told."""
    config = anchored_line(tmp_path)
    emptied(tmp_path / "state")
    out = linewatch("audit", "verify", "-c", str(config))
    assert out.returncode == 1, out.stdout
    assert "BROKEN at entry 1" in out.stdout and "intact: 0 entries" not in out.stdout
    assert "truncated or rolled back" in out.stdout


def test_a_store_rolled_back_to_an_older_copy_is_caught_by_the_configured_anchors(
    tmp_path: Path,
) -> None:
    config = tmp_path / "line.toml"
    config.write_text('[monitor]\nstate_dir = "state"\naudit_anchor_file = "anchors.log"\n')
    line_with_alarms(tmp_path / "state")
    old = (tmp_path / "state" / DB_NAME).read_bytes()  # a copy kept by whoever wants to undo
    acked = linewatch("alarms", "ack", "2", "--reason", "tool wear", "-c", str(config))
    assert acked.returncode == 0, acked.stderr
    assert linewatch("report", "-c", str(config), "-o", str(tmp_path / "r.md")).returncode == 0
    (tmp_path / "state" / DB_NAME).write_bytes(old)
    for extra in ("-wal", "-shm"):
        (tmp_path / "state" / (DB_NAME + extra)).unlink(missing_ok=True)
    out = linewatch("audit", "verify", "-c", str(config))
    assert out.returncode == 1 and "truncated or rolled back" in out.stdout, out.stdout


def test_without_any_anchor_verify_says_what_it_could_not_detect(tmp_path: Path) -> None:
    config = tmp_path / "line.toml"
    config.write_text('[monitor]\nstate_dir = "state"\naudit_anchor_file = "anchors.log"\n')
    line_with_alarms(tmp_path / "state")
    out = linewatch("audit", "verify", "-c", str(config))  # configured, but nothing written yet
    assert out.returncode == 0, out.stdout
    anchors = next(x for x in out.stdout.splitlines() if x.strip().startswith("anchors:"))
    assert "does not exist" in anchors
    assert "truncated or re-hashed store could not be detected" in anchors
    plain = linewatch("audit", "verify", "--state-dir", str(tmp_path / "state"))
    anchors = next(x for x in plain.stdout.splitlines() if x.strip().startswith("anchors:"))
    assert "none" in anchors and "could not be detected" in anchors


def test_the_configured_anchor_file_and_an_anchor_argument_are_read_once_each(
    tmp_path: Path,
) -> None:
    config = anchored_line(tmp_path)
    out = linewatch("audit", "verify", "-c", str(config), "--anchor",
                    str(tmp_path / "trail" / "anchors.log"), "--anchor", str(tmp_path / "shift.md"))
    assert out.returncode == 0, out.stdout
    anchors = next(x for x in out.stdout.splitlines() if x.strip().startswith("anchors:"))
    assert "2 anchors" in anchors and "shift.md" in anchors


def test_a_report_sends_its_anchor_to_syslog_and_the_log_host_copy_verifies(
    tmp_path: Path,
) -> None:
    """A UDP socket on 127.0.0.1 stands in for the log host; what it received, saved as a
    file, is an anchor file for `verify --anchor` (RFC 3164 framing, PRI 13 = user.notice)."""
    import socket

    host = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    host.bind(("127.0.0.1", 0))
    host.settimeout(10.0)
    try:
        config = tmp_path / "line.toml"
        config.write_text('[monitor]\nstate_dir = "state"\n'
                          f'audit_anchor_syslog = "127.0.0.1:{host.getsockname()[1]}"\n')
        line_with_alarms(tmp_path / "state")
        made = linewatch("report", "-c", str(config), "-o", str(tmp_path / "shift.md"))
        assert made.returncode == 0 and made.stderr == "", made.stderr
        message = host.recvfrom(65536)[0].decode("utf-8")
    finally:
        host.close()
    assert message.startswith("<13>linewatch-audit: linewatch-audit-anchor v1 ")
    assert "why=report" in message
    with Store(tmp_path / "state", create=False) as store:
        entries, head = store.audit.head()
    assert f"entries={entries} head={head} " in message
    kept = tmp_path / "loghost-syslog"
    kept.write_text(f"Dec  3 14:00:00 linepc {message[4:]}\n")  # as a daemon files it
    emptied(tmp_path / "state")
    out = linewatch("audit", "verify", "-c", str(config), "--anchor", str(kept))
    assert out.returncode == 1 and "truncated or rolled back" in out.stdout, out.stdout


def test_a_syslog_that_cannot_be_reached_is_told_and_the_report_still_made(
    tmp_path: Path,
) -> None:
    config = tmp_path / "line.toml"
    config.write_text('[monitor]\nstate_dir = "state"\n'
                      f'audit_anchor_syslog = "{tmp_path / "no-daemon.sock"}"\n')
    line_with_alarms(tmp_path / "state")
    made = linewatch("report", "-c", str(config), "-o", str(tmp_path / "shift.md"))
    assert made.returncode == 0 and (tmp_path / "shift.md").exists()
    assert made.stderr.startswith("linewatch: cannot send the audit anchor to syslog")
    assert "Traceback" not in made.stderr and len(made.stderr.splitlines()) == 1
