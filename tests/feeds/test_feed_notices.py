"""Things about a file worth knowing though no row is lost: said once per file, naming the
file, by `check` (a warning on stderr) and by `watch` (a feed event, shown in the feeds view)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from linewatch.config import FeedConfig
from linewatch.feeds.formats import RowParser, read_log
from tests.watch.helpers import records, start_watch, stop, wait_caught_up

DUP = "time,od,od,wall\n" + "".join(f"t{k},{12 + k / 100},{13 + k / 100},2.{k}\n"
                                     for k in range(2000))


def test_a_duplicate_column_name_is_noticed_once_and_the_first_is_read(tmp_path: Path) -> None:
    p = tmp_path / "dup.csv"
    p.write_text(DUP)
    data = p.read_bytes()
    slow = RowParser(FeedConfig(paths=[]), str(p)).parse(data.split(b"\n")[:-1], 1)
    fast = read_log(str(p), FeedConfig(paths=[]))
    for b in (slow, fast):
        assert len(b.notices) == 1
        (n,) = b.notices
        assert n.file == str(p) and n.line == 1
        assert "'od'" in n.text and "2 times" in n.text and "fields 2, 3" in n.text
        assert list(b.values["od"])[:2] == [12.0, 12.01]  # the first column of the name
        assert b.rejected == []


def test_check_warns_about_a_duplicate_column_on_stderr(tmp_path: Path) -> None:
    p = tmp_path / "dup.csv"
    p.write_text(DUP)
    run = subprocess.run([sys.executable, "-m", "linewatch", "check", str(p), "--format",
                          "jsonl"], capture_output=True, text=True, timeout=60)
    warnings = [line for line in run.stderr.splitlines() if "warning" in line]
    assert len(warnings) == 1 and str(p) in warnings[0] and "'od'" in warnings[0]


def test_watch_says_once_which_column_of_which_file_is_doubled(tmp_path: Path) -> None:
    p = tmp_path / "dup.csv"
    p.write_text("\n".join(DUP.split("\n")[:30]) + "\n")
    state = tmp_path / "state"
    proc = start_watch([str(p)], state)
    wait_caught_up(state, p)
    with p.open("a") as f:
        f.write("t9,12.5,13.5,2.5\n")
    wait_caught_up(state, p)
    out, _ = stop(proc)
    warn = [r for r in records(out) if r["type"] == "feed" and r["event"] == "warning"]
    assert len(warn) == 1 and warn[0]["file"] == str(p) and "'od'" in warn[0]["detail"]
