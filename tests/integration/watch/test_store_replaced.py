"""A store file overwritten while a collector has it open: one clear line and a non-zero exit,
never a traceback (a real `watch` process; the file is overwritten as a careless copy would)."""

from __future__ import annotations

import os
import sqlite3
import time
from pathlib import Path

from tests.integration.watch.helpers import (
    HEADER,
    process_series,
    rows_text,
    start_watch,
    stop,
    wait_caught_up,
)


def test_store_overwritten_while_collecting_ends_with_one_line(tmp_path: Path) -> None:
    log = tmp_path / "od.csv"
    log.write_text(HEADER + "".join(rows_text(process_series(40, seed=3))))
    state = tmp_path / "state"
    proc = start_watch([str(log)], state)
    try:
        wait_caught_up(state, log)
        raw = sqlite3.connect(state / "linewatch.db")  # move everything into the main file
        raw.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        raw.close()
        (state / "linewatch.db").write_bytes(os.urandom(64 * 1024))  # same inode, new bytes
        with log.open("a") as f:
            f.writelines(rows_text(process_series(5, seed=4), start=40))
        deadline = time.monotonic() + 20
        while proc.poll() is None and time.monotonic() < deadline:
            time.sleep(0.1)
    finally:
        _, err = stop(proc) if proc.poll() is None else ("", proc.stderr.read())
    assert proc.returncode != 0
    assert "Traceback" not in err, err
    lines = [x for x in err.splitlines() if x.strip()]
    assert len(lines) == 1 and "damaged or was replaced" in lines[0], err
