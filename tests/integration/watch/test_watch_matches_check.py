"""`watch` signals equal `check` signals on the same rows, whatever the write chunking."""

from __future__ import annotations

import random
import time

from tests.integration.watch.helpers import (
    HEADER,
    check_signals,
    offset_of,
    process_series,
    records,
    rows_text,
    start_watch,
    stop,
    wait_caught_up,
)


def test_signals_of_watch_equal_those_of_check_for_pieces_written_live(tmp_path):
    log = tmp_path / "logs" / "line.csv"
    log.parent.mkdir()
    text = HEADER + "".join(rows_text(process_series(300, seed=4)))
    data = text.encode()
    cut = len(data) // 3
    log.write_bytes(data[:cut])  # some history before the watcher starts
    proc = start_watch([str(tmp_path / "logs" / "*.csv")], tmp_path / "state",
                       "--baseline", "40", "--rules", "nelson")
    rnd = random.Random(9)
    pos = cut
    with log.open("ab") as f:
        while pos < len(data):
            step = rnd.randint(1, 400)  # pieces that split lines anywhere
            f.write(data[pos : pos + step])
            f.flush()
            pos += step
    wait_caught_up(tmp_path / "state", log)
    out, err = stop(proc)
    assert proc.returncode == 0, err
    got = {(r["characteristic"], r["chart"], r["rule"], r["index"]) for r in records(out)
           if r["type"] == "signal"}
    expected = check_signals(log, "--baseline", "40", "--rules", "nelson")
    assert expected and got == expected
    summary = [r for r in records(out) if r["type"] == "summary"]
    assert summary and summary[0]["points"] == 300


def test_an_unterminated_last_line_is_not_a_point(tmp_path):
    log = tmp_path / "line.csv"
    log.write_text(HEADER + "".join(rows_text(process_series(30, seed=2))) + "2026-03-02,P,10.5")
    other = tmp_path / "other.csv"  # a second log: its rows show that later passes ran
    other.write_text("time,part,width\n")
    proc = start_watch([str(log), str(other)], tmp_path / "state", "--baseline", "10")
    complete = len((HEADER + "".join(rows_text(process_series(30, seed=2)))).encode())
    deadline = time.monotonic() + 30
    while offset_of(tmp_path / "state", log) != complete and time.monotonic() < deadline:
        time.sleep(0.05)
    with other.open("a") as f:
        f.write("2026-03-02T06:00:00,P0,5.0\n")
    wait_caught_up(tmp_path / "state", other)  # a pass after the partial line was seen
    assert offset_of(tmp_path / "state", log) == complete  # the partial line stays unread
    out, _ = stop(proc)
    summary = next(r for r in records(out) if r["type"] == "summary"
                   and r["characteristic"] == "od")
    assert summary["points"] == 30


def test_with_poll_a_row_is_seen_without_file_system_events(tmp_path):
    """`--poll` (network shares, where inotify never fires) reads on a fixed beat instead."""
    from tests.integration.watch.helpers import Reader

    log = tmp_path / "line.csv"
    log.write_text(HEADER + "".join(rows_text(process_series(30, seed=5))))
    proc = start_watch([str(log)], tmp_path / "state", "--baseline", "30", "--rules", "we1",
                       "--poll", "0.3")
    out = Reader(proc)
    wait_caught_up(tmp_path / "state", log)
    with log.open("a") as f:
        f.writelines(rows_text([14.0], start=30))  # far beyond the limits
    _, signal = out.wait_for(lambda r: r.get("type") == "signal" and r["index"] == 30)
    assert signal["rule"] == "we1" and signal["value"] == 14.0
    proc.terminate()
    assert proc.wait(timeout=20) == 0
