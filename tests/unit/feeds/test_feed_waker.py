"""Wake-ups: file-system events (inotify through watchdog), folders that appear later,
polling for network shares, and no wake-ups caused by our own reading.

No timing thresholds here: each wait uses a re-check beat far longer than the test, so a True
can only come from the event being tested (speed figures live in the benchmarks).
"""

from __future__ import annotations

import os
import threading
from pathlib import Path

from linewatch.feeds.tailer import Tailer
from linewatch.feeds.watcher import Waker

LONG = 120.0


def later(action, delay: float = 0.1) -> threading.Timer:
    t = threading.Timer(delay, action)
    t.start()
    return t


def quiet(w: Waker) -> None:
    """Swallow wake-ups already pending from the test's own setup."""
    while w.wait(0.2):
        pass


def test_an_append_wakes_the_waiter(tmp_path: Path) -> None:
    log = tmp_path / "log.csv"
    log.write_text("time,od\n")
    w = Waker([str(tmp_path / "*.csv")], safety_seconds=LONG)
    try:
        assert w.mode == "events" and w.watched == [str(tmp_path)]
        quiet(w)
        later(lambda: log.open("a").write("06:00,25.0\n"))
        assert w.wait(30.0) is True
    finally:
        w.close()


def test_nothing_happening_means_no_wake_up(tmp_path: Path) -> None:
    w = Waker([str(tmp_path / "*.csv")], safety_seconds=LONG)
    try:
        quiet(w)
        assert w.wait(0.3) is False
        # the same waker is not deaf: a real write wakes it (so the quiet above means something)
        (tmp_path / "new.csv").write_text("time,od\n06:00,25.0\n")
        assert w.wait(30.0) is True
    finally:
        w.close()


def test_our_own_reading_does_not_wake_us(tmp_path: Path) -> None:
    log = tmp_path / "log.csv"
    log.write_text("time,od\n06:00,25.0\n")
    t = Tailer([], None, None, patterns=[str(tmp_path / "*.csv")])
    w = Waker(t.patterns, safety_seconds=LONG)
    try:
        t.poll()
        quiet(w)
        for _ in range(3):
            t.poll()  # lists the folder, stats and reads the file
            assert w.wait(0.3) is False
        with open(log, "a") as fh:  # someone else's append still wakes us
            fh.write("06:01,25.1\n")
        assert w.wait(30.0) is True
    finally:
        w.close()
        t.close()


def test_a_folder_that_appears_later_is_watched_once_it_exists(tmp_path: Path) -> None:
    target = tmp_path / "line3" / "gauges"
    w = Waker([str(target / "*.csv")], safety_seconds=LONG)
    try:
        assert w.watched == [str(tmp_path)]
        quiet(w)
        later(lambda: target.mkdir(parents=True))
        assert w.wait(30.0) is True
        while str(target) not in w.watched:
            assert w.wait(10.0) is True  # the deeper folder's creation wakes us too
        quiet(w)
        later(lambda: (target / "od.csv").write_text("time,od\n"))
        assert w.wait(30.0) is True
    finally:
        w.close()


def test_polling_mode_wakes_on_its_beat_without_events(tmp_path: Path) -> None:
    w = Waker([str(tmp_path / "*.csv")], poll_seconds=0.2)
    try:
        assert w.mode == "poll" and w.watched == []
        assert w.wait(30.0) is True
    finally:
        w.close()


def test_wake_and_close_release_a_waiter(tmp_path: Path) -> None:
    w = Waker([str(tmp_path / "*.csv")], safety_seconds=LONG)
    quiet(w)
    later(w.wake)
    assert w.wait(30.0) is True
    before = {t.name for t in threading.enumerate()}
    w.close()
    after = {t.name for t in threading.enumerate()}
    assert len(after) < len(before)  # the observer thread is gone


def test_the_recheck_beat_catches_a_change_no_event_reports(tmp_path: Path) -> None:
    # inotify reports a write to the folder it was made through: a write through a hard link
    # in another folder is a change our folder watch never hears about
    watched, elsewhere = tmp_path / "line", tmp_path / "elsewhere"
    watched.mkdir()
    elsewhere.mkdir()
    log = watched / "log.csv"
    log.write_text("time,od\n06:00,25.0\n")
    os.link(log, elsewhere / "alias.csv")
    t = Tailer([], None, None, patterns=[str(watched / "*.csv")])
    deaf = Waker(t.patterns, safety_seconds=LONG)
    beat = Waker(t.patterns, safety_seconds=0.3)
    try:
        t.poll()
        quiet(deaf)
        quiet(beat)
        with open(elsewhere / "alias.csv", "a") as fh:
            fh.write("06:01,25.1\n")
        assert deaf.wait(1.0) is False  # the event never came
        assert beat.wait(30.0) is True  # the beat came instead
        chunks = t.poll()
        assert [list(c.batch.values["od"]) for c in chunks if c.batch] == [[25.1]]
    finally:
        deaf.close()
        beat.close()
        t.close()
