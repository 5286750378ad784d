"""A collector whose state directory's disk fills up stays alive, says so at once, retries
with back-off, and once there is room again stores every row exactly once."""

from __future__ import annotations

import signal
import sqlite3
import time
from pathlib import Path

import pytest

from tests.integration.watch.helpers import (
    HEADER,
    Reader,
    process_series,
    rows_text,
    start_watch,
    wait_caught_up,
)
from tests.integration.watch.small_disk import SmallDisk, small_disk  # noqa: F401  (the fixture)


def _stored_rows(state_dir: Path) -> tuple[int, int]:
    """(points stored, distinct source lines among them) for the one characteristic."""
    con = sqlite3.connect(f"file:{state_dir / 'linewatch.db'}?mode=ro", uri=True, timeout=5)
    try:
        return con.execute(
            "SELECT COUNT(*), COUNT(DISTINCT line) FROM points WHERE characteristic = 'od'"
        ).fetchone()
    finally:
        con.close()


def test_a_full_disk_is_reported_and_collection_resumes_when_space_returns(
    tmp_path: Path, small_disk: SmallDisk  # noqa: F811
) -> None:
    log = tmp_path / "line.csv"  # the log lives elsewhere: only the store's disk fills up
    series = process_series(600, seed=11)
    log.write_text(HEADER + "".join(rows_text(series[:200])))
    state = small_disk.path / "state"
    proc = start_watch([str(log)], state, "--baseline", "30", "--rules", "we1")
    reader = Reader(proc)
    try:
        wait_caught_up(state, log)
        small_disk.fill()
        with log.open("a") as f:  # rows keep arriving while the disk is full
            for k in range(200, 600, 50):
                f.writelines(rows_text(series[k:k + 50], start=k))
                f.flush()
                time.sleep(0.2)
        # said at once, as a record, and the collector is still there
        reader.wait_for(lambda r: r.get("type") == "error" and "full" in str(r), timeout=15)
        # a few retries while still full, each reported
        reader.wait_for(lambda r: r.get("type") == "error" and r.get("failures", 0) >= 2,
                        timeout=15)
        assert proc.poll() is None, "the collector died on a full disk"
        small_disk.free()
        wait_caught_up(state, log, timeout=60)  # back-off is bounded: it resumes
        assert proc.poll() is None
    finally:
        if proc.poll() is None:
            proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=30)
        err = proc.stderr.read() if proc.stderr else ""
    assert proc.returncode == 0, err
    assert "Traceback" not in err
    assert _stored_rows(state) == (600, 600)  # every row exactly once


def test_the_small_disk_fills_to_the_last_byte_and_frees_again(
    small_disk: SmallDisk,  # noqa: F811
) -> None:
    room = small_disk.free_bytes()
    assert 3 << 20 <= room <= 4 << 20  # the 4 MB the fixture asks mount for
    assert small_disk.fill() >= room - 4096
    with pytest.raises(OSError, match="No space left"):
        (small_disk.path / "one-more").write_bytes(b"x" * 4096)
    small_disk.free()
    assert small_disk.free_bytes() >= room - 4096
    (small_disk.path / "one-more").write_bytes(b"x" * 4096)
