"""Rows caught up from a file's history are as old as the file says, not as old as the start.

A watcher started (or restarted) on a log that was last written two hours ago must not show
that feed as fresh: with `stale_after` at one hour it reports the feed stale at once, and a
row appended afterwards brings it back.
"""

from __future__ import annotations

import os
import signal
import time

from tests.integration.watch.helpers import HEADER, Reader, process_series, rows_text, start_watch


def test_a_log_last_written_hours_ago_is_stale_at_once_and_a_new_row_resumes_it(tmp_path):
    log = tmp_path / "line.csv"
    series = process_series(41, seed=3)
    log.write_text(HEADER + "".join(rows_text(series[:40])))
    two_hours_ago = time.time() - 7200
    os.utime(log, (two_hours_ago, two_hours_ago))
    config = tmp_path / "line.toml"
    config.write_text('[monitor]\nstale_after = "1h"\n')
    proc = start_watch([str(log)], tmp_path / "state", "-c", str(config), "--baseline", "20")
    out = Reader(proc)

    def feed(event: str):
        return lambda r: r.get("type") == "feed" and r.get("event") == event

    out.wait_for(feed("stale"))
    with log.open("a") as f:
        f.write(rows_text(series[40:], start=40)[0])
    out.wait_for(feed("resumed"))
    proc.send_signal(signal.SIGTERM)
    assert proc.wait(timeout=20) == 0
    _, summary = out.wait_for(lambda r: r.get("type") == "summary")
    assert summary["points"] == 41
