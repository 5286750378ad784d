"""`watch` on a folder holding more logs than the process may open files at once."""

from __future__ import annotations

import resource
import subprocess
import sys

from tests.integration.watch.helpers import HEADER, records, stop, wait_caught_up


def test_three_hundred_logs_under_a_limit_of_64_open_files_are_all_read(tmp_path):
    folder = tmp_path / "archive"
    folder.mkdir()
    for d in range(300):
        (folder / f"day{d:03d}.csv").write_text(
            HEADER + "".join(f"2026-03-02T06:00:{k:02d},P{k},{10 + (d + k) % 7 / 100:.2f}\n"
                             for k in range(4)))

    def low_limit() -> None:
        resource.setrlimit(resource.RLIMIT_NOFILE, (64, 64))

    printed = tmp_path / "out.jsonl"
    with printed.open("w") as sink:
        proc = subprocess.Popen(
            [sys.executable, "-m", "linewatch", "watch", str(folder / "*.csv"), "--no-ui",
             "--format", "jsonl", "--state-dir", str(tmp_path / "state"), "--baseline", "50"],
            stdout=sink, stderr=subprocess.PIPE, text=True, preexec_fn=low_limit,
        )
        try:
            wait_caught_up(tmp_path / "state", folder / "day299.csv")
        finally:
            _, err = stop(proc)
    out = printed.read_text()
    assert "Too many open files" not in out + err
    summary = [r for r in records(out) if r["type"] == "summary"]
    assert summary and summary[0]["points"] == 1200, err[-2000:]
