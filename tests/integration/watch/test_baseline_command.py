"""`linewatch baseline` asks the running collector for a new phase from the shell, exactly as
the close-up does; a request left while no collector runs is carried out by the next one,
exactly once even when that one is killed and another starts; bad requests are one line and
exit 2, and change nothing."""

from __future__ import annotations

import signal
import subprocess
import sys

import numpy as np
import pytest

from tests.integration.watch.helpers import (
    HEADER,
    Reader,
    offset_of,
    records,
    rows_text,
    start_watch,
    stop,
    wait_caught_up,
    wait_until,
)


def _baseline(state_dir, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "linewatch", "baseline", *args, "--state-dir", str(state_dir)],
        capture_output=True, text=True, timeout=60,
    )


def test_a_new_phase_asked_from_the_shell_is_carried_out_and_audited(tmp_path):
    log = tmp_path / "line.csv"
    first = np.tile([10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8], 3)
    log.write_text(HEADER + "".join(rows_text(np.concatenate((first, first + 2.0)))))
    state = tmp_path / "state"
    proc = start_watch([str(log)], state, "--baseline", "20")
    reader = Reader(proc)
    try:
        wait_caught_up(state, log)
        done = _baseline(state, "od", "--at", "30", "--reason", "die changed")
        assert done.returncode == 0, done.stderr
        _, rec = reader.wait_for(lambda r: r.get("type") == "baseline")
        _, lim = reader.wait_for(lambda r: r.get("type") == "limits"
                                 and r["chart"] == "individuals" and r["center"] > 11)
    finally:
        stop(proc)
    assert rec["start_index"] == 30 and rec["reason"] == "die changed"
    assert lim["center"] == pytest.approx(np.mean(first[:20] + 2.0))
    audit = subprocess.run(
        [sys.executable, "-m", "linewatch", "audit", "export", "--format", "jsonl",
         "--state-dir", str(state)], capture_output=True, text=True, timeout=60, check=True,
    ).stdout
    assert '"action": "new-baseline"' in audit and "die changed" in audit


def _audited_requests(state) -> list[dict]:
    """The audit trail's entries for new phases asked for (not the limits that followed)."""
    out = subprocess.run(
        [sys.executable, "-m", "linewatch", "audit", "export", "--format", "jsonl",
         "--state-dir", str(state)], capture_output=True, text=True, timeout=60, check=True,
    ).stdout
    return [e for e in records(out) if e["action"] == "new-baseline" and e["subject"] == "od"]


def test_a_request_left_from_the_shell_is_carried_out_once_across_a_restart(tmp_path):
    log = tmp_path / "line.csv"
    first = np.tile([10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8], 3)
    log.write_text(HEADER + "".join(rows_text(np.concatenate((first, first + 2.0)))))
    state = tmp_path / "state"
    proc = start_watch([str(log)], state, "--baseline", "20")
    try:
        wait_caught_up(state, log)
    finally:
        stop(proc)
    done = _baseline(state, "od", "--at", "30", "--reason", "die changed")  # nobody collects
    assert done.returncode == 0, done.stderr
    proc = start_watch([str(log)], state, "--baseline", "20")
    reader = Reader(proc)
    try:
        _, rec = reader.wait_for(lambda r: r.get("type") == "baseline", timeout=30)
    finally:
        proc.send_signal(signal.SIGKILL)  # no clean exit: only what was committed counts
        proc.communicate(timeout=20)
    assert rec == {"type": "baseline", "characteristic": "od", "start_index": 30,
                   "reason": "die changed"}
    proc = start_watch([str(log)], state, "--baseline", "20")  # takes over the dead lease
    try:
        with log.open("a") as f:  # rows only a collector stores: proof it ran its beats
            f.writelines(rows_text(first[:10] + 2.0, start=60))
        wait_until(lambda: offset_of(state, log) == log.stat().st_size, 30)
    finally:
        out, _ = stop(proc)
    assert [r for r in records(out) if r["type"] == "baseline"] == []
    asked = _audited_requests(state)
    assert len(asked) == 1 and asked[0]["payload"]["reason"] == "die changed"
    limits = subprocess.run(
        [sys.executable, "-c",
         "import sqlite3,sys; c=sqlite3.connect(sys.argv[1]);"
         "print(c.execute(\"SELECT COUNT(*) FROM limits WHERE phase = 1\").fetchone()[0])",
         str(state / "linewatch.db")], capture_output=True, text=True, check=True).stdout
    assert int(limits) == 2  # one pair of new limits (location and dispersion chart)


@pytest.mark.parametrize(
    ("args", "says"),
    [
        (["nosuch", "--now", "--reason", "x"], "no characteristic nosuch (known: od)"),
        (["od", "--at", "61", "--reason", "x"], "a new phase can start at 0..60"),
        (["od", "--at", "-1", "--reason", "x"], "a new phase can start at 0..60"),
        (["od", "--now", "--reason", "  "], "a reason is required"),
    ],
)
def test_bad_requests_are_one_line_and_exit_2(tmp_path, args, says):
    log = tmp_path / "line.csv"
    log.write_text(HEADER + "".join(rows_text(np.tile([10.0, 10.2, 9.9], 20))))
    state = tmp_path / "state"
    proc = start_watch([str(log)], state, "--baseline", "20")
    try:
        wait_caught_up(state, log)
    finally:
        stop(proc)
    done = _baseline(state, *args)
    assert done.returncode == 2
    assert done.stderr.count("\n") == 1 and says in done.stderr, done.stderr
    listed = subprocess.run(
        [sys.executable, "-c",
         "import sqlite3,sys; c=sqlite3.connect(sys.argv[1]);"
         "print(c.execute(\"SELECT COUNT(*) FROM baseline_requests\").fetchone()[0])",
         str(state / "linewatch.db")],
        capture_output=True, text=True, check=True).stdout.strip()
    assert listed == "0"
