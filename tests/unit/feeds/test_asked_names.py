"""A `--column` name that no long-layout row names: rows name their characteristic one by one,
so no header can tell; the name is flagged once, after every log was read (check) or once every
followed file was read to its end (watch), listing the characteristics there are, and a name
that turns up later is said to have appeared. The wording follows the wide header's
("no column 'x' (columns: ...)")."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import FeedError
from linewatch.feeds.tailer import Tailer
from linewatch.feeds.whole_file import read_logs
from tests.integration.watch.helpers import records, start_watch, stop, wait_caught_up

LONG = FeedConfig(paths=[], layout="long")


def _long_rows(names: list[str], n: int) -> str:
    return "time,characteristic,value\n" + "".join(
        f"t{k},{name},{12 + k / 100}\n" for k in range(n) for name in names)


def _two_logs(tmp_path: Path) -> tuple[Path, Path]:
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    a.write_text(_long_rows(["od", "wall"], 20))
    b.write_text(_long_rows(["ovality"], 20))
    return a, b


def test_check_reads_a_name_held_by_only_one_of_several_long_logs(tmp_path: Path) -> None:
    a, b = _two_logs(tmp_path)
    batches = read_logs([str(a), str(b)], [LONG, LONG], ["ovality", "od"])
    assert [sorted(x.values) for x in batches] == [["od"], ["ovality"]]
    assert [len(x.values[c]) for x, c in zip(batches, ["od", "ovality"], strict=True)] == [20, 20]


def test_check_names_a_name_no_long_log_holds_once_with_every_characteristic(
        tmp_path: Path) -> None:
    a, b = _two_logs(tmp_path)
    with pytest.raises(FeedError) as err:
        read_logs([str(a), str(b)], [LONG, LONG], ["od", "nosuch"])
    assert str(err.value) == (
        f"{a}, {b}: no characteristic 'nosuch' (characteristics: od, wall, ovality)")


def test_check_command_says_it_once_on_stderr(tmp_path: Path) -> None:
    a, b = _two_logs(tmp_path)
    cfg = tmp_path / "long.toml"
    cfg.write_text('[[feed]]\npaths = ["*.csv"]\nlayout = "long"\n')
    run = subprocess.run([sys.executable, "-m", "linewatch", "check", "-c", str(cfg),
                          "--column", "nosuch", "--column", "od", str(a), str(b)],
                         capture_output=True, text=True, timeout=60)
    assert run.returncode == 2
    assert run.stderr.splitlines() == [
        f"linewatch: {a}, {b}: no characteristic 'nosuch' (characteristics: od, wall, "
        "ovality)"]


def _poll_to_end(t: Tailer, max_bytes: int = 4 << 20) -> list:
    """Every feed event of the polls until nothing is waiting any more."""
    events = []
    for _ in range(1000):
        chunks = t.poll(max_bytes=max_bytes)
        events += [e for c in chunks for e in c.events]
        if not any(c.more for c in chunks):
            return events
    raise AssertionError("the files were never read to their end")


def test_watch_says_it_once_when_every_file_was_read_to_its_end(tmp_path: Path) -> None:
    a, b = _two_logs(tmp_path)
    feed = FeedConfig(paths=[str(tmp_path / "*.csv")], layout="long")
    t = Tailer([feed], None, expected=["od", "nosuch"])
    first = t.poll(max_bytes=64)  # a few lines of each file: not read to the end yet
    assert any(c.more for c in first)
    assert not [e for c in first for e in c.events if e.kind == "warning"]
    events = _poll_to_end(t, max_bytes=64)
    (warning,) = [e for e in events if e.kind == "warning"]
    assert warning.file == feed.paths[0]
    assert warning.detail == "no characteristic 'nosuch' (characteristics: od, wall, ovality)"
    with a.open("a") as f:  # more rows of the names there are: nothing new to say
        f.write("t99,od,12.5\n")
    assert [e.kind for e in _poll_to_end(t)] == []
    with b.open("a") as f:  # the name turns up: said, and the warning stays where it was
        f.write("t99,nosuch,3.5\n")
    chunks = t.poll()
    found = [e for c in chunks for e in c.events]
    assert [(e.kind, e.file, e.detail) for e in found] == [
        ("found", feed.paths[0], f"characteristic 'nosuch' appeared in {b}")]
    assert len(next(c.batch for c in chunks if c.path == str(b)).values["nosuch"]) == 1
    with b.open("a") as f:
        f.write("t100,nosuch,3.6\n")
    assert [e.kind for e in _poll_to_end(t)] == []


def test_watch_with_one_long_feed_and_the_columns_it_keeps_says_it_too(
        tmp_path: Path) -> None:
    """One feed reads only the asked names: the others are still known for the message."""
    a, _ = _two_logs(tmp_path)
    t = Tailer([FeedConfig(paths=[str(a)], layout="long")], ["od", "nosuch"],
               expected=["od", "nosuch"])
    (warning,) = [e for e in _poll_to_end(t) if e.kind == "warning"]
    assert warning.detail == "no characteristic 'nosuch' (characteristics: od, wall)"


def test_watch_of_wide_files_leaves_it_to_each_file_s_header(tmp_path: Path) -> None:
    """A wide header says what it lacks itself (per file): nothing more is said."""
    p = tmp_path / "w.csv"
    p.write_text("time,od\n" + "".join(f"t{k},{12 + k / 100}\n" for k in range(5)))
    t = Tailer([FeedConfig(paths=[str(p)])], None, expected=["od", "nosuch"])
    assert [e.kind for e in _poll_to_end(t)] == ["appeared"]


def test_a_name_stored_before_a_restart_is_not_flagged(tmp_path: Path) -> None:
    a, _ = _two_logs(tmp_path)
    t = Tailer([FeedConfig(paths=[str(a)], layout="long")], None, expected=["nosuch"],
               found_before=["nosuch"])
    assert [e.kind for e in _poll_to_end(t)] == ["appeared"]


def test_watch_process_flags_it_in_its_records_and_feeds_view(tmp_path: Path) -> None:
    """One long feed (whose reader keeps only the asked names) over a pattern matching two
    files: one warning, under the pattern in the feeds view."""
    import time

    from linewatch.present.snapshot import feed_views
    from linewatch.store.db import Store

    a, b = _two_logs(tmp_path)
    pattern = str(tmp_path / "*.csv")
    cfg = tmp_path / "line.toml"
    cfg.write_text(f'[[feed]]\npaths = ["{pattern}"]\nlayout = "long"\n')
    state = tmp_path / "state"
    proc = start_watch([], state, "-c", str(cfg), "--column", "od", "--column", "nosuch")
    for p in (a, b):
        wait_caught_up(state, p)
    out, _ = stop(proc)
    warned = [r for r in records(out) if r["type"] == "feed" and r["event"] == "warning"]
    assert [(r["file"], r["detail"]) for r in warned] == [
        (pattern, "no characteristic 'nosuch' (characteristics: od, wall, ovality)")]
    with Store(state, create=False) as store:
        views = {fv.file: fv for fv in feed_views(store, time.time(), 0)}
    assert views[pattern].status == "warning"
    assert views[pattern].notes == [warned[0]["detail"]]
    assert {views[str(a)].status, views[str(b)].status} == {"following"}
