"""Paths that are no log file (a FIFO, a folder, a symbolic link loop) and patterns that match
the world: `check` refuses special files with one line instead of blocking; `watch` says once
what it does not read and why, and bounds the expansion of a pattern (files and folder entries
visited, pseudo file systems skipped, SIGTERM honoured) saying what was bounded."""

from __future__ import annotations

import glob
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from linewatch.feeds.patterns import expand
from tests.integration.watch.helpers import records, start_watch, stop, wait_caught_up


def test_check_refuses_a_fifo_with_one_line_instead_of_blocking(tmp_path: Path) -> None:
    fifo = tmp_path / "gauge.csv"
    os.mkfifo(fifo)
    run = subprocess.run([sys.executable, "-m", "linewatch", "check", str(fifo)],
                         capture_output=True, text=True, timeout=30)
    assert run.returncode == 2
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and "named pipe (FIFO)" in lines[0] and "check -" in lines[0]


def test_watch_says_which_matched_paths_it_does_not_read_and_why(tmp_path: Path) -> None:
    good = tmp_path / "a.csv"
    good.write_text("time,od\nt1,12.0\nt2,12.1\n")
    os.mkfifo(tmp_path / "b.csv")
    (tmp_path / "c.csv").mkdir()
    os.symlink(tmp_path / "e.csv", tmp_path / "d.csv")
    os.symlink(tmp_path / "d.csv", tmp_path / "e.csv")
    state = tmp_path / "state"
    proc = start_watch([str(tmp_path / "*.csv")], state)
    wait_caught_up(state, good)
    later = tmp_path / "f.csv"  # found by a later expansion of the pattern, which must not
    later.write_text("time,od\nt3,12.2\n")  # report the skipped paths again
    wait_caught_up(state, later)
    out, _ = stop(proc)
    skipped = {r["file"]: r["detail"] for r in records(out)
               if r["type"] == "feed" and r["event"] == "skipped"}
    assert set(skipped) == {str(tmp_path / n) for n in ("b.csv", "c.csv", "d.csv", "e.csv")}
    assert "FIFO" in skipped[str(tmp_path / "b.csv")]
    assert "directory" in skipped[str(tmp_path / "c.csv")]
    assert "symbolic link loop" in skipped[str(tmp_path / "d.csv")]
    assert sum(1 for r in records(out) if r["type"] == "feed" and r["event"] == "skipped") == 4


@pytest.fixture()
def tree(tmp_path: Path) -> Path:
    for p in ["a/b/c.csv", "a/x.csv", "a/.h/y.csv", ".z.csv", "z.csv", "a/b/d/e.log",
              "q1.csv", "a/b/c.txt", "a/b/d/f/g.csv"]:
        (tmp_path / p).parent.mkdir(parents=True, exist_ok=True)
        (tmp_path / p).write_text("x\n")
    os.symlink(tmp_path / "a", tmp_path / "a" / "b" / "back")  # a loop for ** to ignore
    return tmp_path


@pytest.mark.parametrize("pattern", ["**/*.csv", "*.csv", "a/*/*.csv", "a/b/c.csv", "*/b/*",
                                     "[qz]*.csv", "a/**/*.log", ".*.csv", "nope/*.csv",
                                     "a/**/g.csv"])
def test_expansion_matches_what_glob_matches(tree: Path, pattern: str) -> None:
    # reference: the standard library's glob (recursive), which expansion replaces
    full = str(tree / pattern)
    want = sorted(os.path.abspath(m) for m in glob.glob(full, recursive=True)
                  if "/back/" not in m)  # glob follows the link loop; the expansion does not
    assert expand(full).paths == want


def test_expansion_is_bounded_and_says_how(tree: Path) -> None:
    e = expand(str(tree / "**" / "*.csv"), max_matches=2)
    assert len(e.paths) == 2 and "2 matching files" in (e.bounded or "")
    e = expand(str(tree / "**" / "*.csv"), max_visited=5)
    assert e.visited <= 6 and "5 folder entries" in (e.bounded or "")
    e = expand("/proc/**")
    assert e.paths == [] and "/proc" in (e.bounded or "")
    assert expand("/**/*.csv", should_stop=lambda: True).stopped


def _lines_of(proc: subprocess.Popen) -> list[str]:
    """The process's stdout lines as they come (a reader thread: a hung process never hangs
    the test)."""
    import threading

    lines: list[str] = []

    def read() -> None:
        assert proc.stdout is not None
        for line in proc.stdout:
            lines.append(line)

    threading.Thread(target=read, daemon=True).start()
    return lines


def _term_and_wait(proc: subprocess.Popen, limit: float) -> float:
    """SIGTERM, then seconds until the process ended (killed after `limit`)."""
    proc.send_signal(signal.SIGTERM)
    t0 = time.monotonic()
    try:
        proc.wait(timeout=limit)
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.wait()
    return time.monotonic() - t0


def test_watch_on_a_pattern_matching_the_world_says_so_and_stops_on_sigterm(
        tmp_path: Path) -> None:
    proc = start_watch(["/proc/**", "/**/*.no-such-suffix"], tmp_path / "state")
    lines = _lines_of(proc)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and sum('"bounded"' in x for x in lines) < 2:
        time.sleep(0.1)
    assert _term_and_wait(proc, 10) < 5  # SIGTERM is honoured, also during a walk
    bounded = {r["file"]: r["detail"] for r in records("".join(lines))
               if r["type"] == "feed" and r["event"] == "bounded"}
    assert "pseudo file systems not read: /proc" in bounded["/proc/**"]
    assert "/**/*.no-such-suffix" in bounded


def test_sigterm_during_the_first_walk_ends_the_watch(tmp_path: Path) -> None:
    proc = start_watch(["/**/*.x-none"], tmp_path / "state")
    lines = _lines_of(proc)
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline and not any("collector" in x for x in lines):
        time.sleep(0.02)
    time.sleep(0.2)  # the walk starts right after the role line
    assert _term_and_wait(proc, 10) < 5


def test_the_feeds_view_shows_skipped_paths_and_bounded_patterns(tmp_path: Path) -> None:
    from linewatch.domain.records import FeedEvent
    from linewatch.present.snapshot import feed_views
    from linewatch.store.db import Store

    with Store(tmp_path / "state") as store:
        now = time.time()
        store.history.add_feed_event(
            FeedEvent("skipped", "/x/fifo.csv", "is a named pipe (FIFO), not a log file"), now)
        store.history.add_feed_event(
            FeedEvent("bounded", "/proc/**", "pseudo file systems not read: /proc"), now)
        store.history.add_feed_event(FeedEvent("waiting", "/proc/**", "no file matches"), now)
        views = {f.file: f for f in feed_views(store, now + 1, 0)}
    assert views["/x/fifo.csv"].status == "skipped" and "FIFO" in views["/x/fifo.csv"].notes[0]
    assert views["/proc/**"].status == "bounded" and "/proc" in views["/proc/**"].notes[0]
