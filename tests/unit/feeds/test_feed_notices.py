"""Things about a file worth knowing though no row is lost: said once per file, naming the
file, by `check` (a warning on stderr) and by `watch` (a feed event, shown in the feeds view)."""

from __future__ import annotations

import json
import subprocess
import sys
from datetime import UTC
from pathlib import Path

from linewatch.config.model import FeedConfig
from linewatch.feeds.row_parser import RowParser
from linewatch.feeds.whole_file import read_log
from tests.integration.watch.helpers import records, start_watch, stop, wait_caught_up

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


TIMES = ("time,od\n2026-03-02T06:00:00,12.0\n2026-03-02T06:00:05,12.1\n"
         "2026-03-02T05:59:00,12.0\nsoon,12.05\n2026-03-02T06:01:00+01:00,12.02\n,12.01\n"
         "06:30:00,12.0\n1772431200.5,12.0\n")


def test_time_stamps_are_ordered_as_the_standard_library_reads_them() -> None:
    from datetime import datetime

    from linewatch.feeds.health import FeedHealth, time_key

    # reference: datetime.fromisoformat / timestamp of the standard library
    a, b = "2026-03-02T06:00:00+00:00", "2026-03-02T07:30:00+02:00"
    assert time_key(b) - time_key(a) == (datetime.fromisoformat(b)
                                         - datetime.fromisoformat(a)).total_seconds()
    assert time_key("2026-03-02T06:00:00Z") == datetime(2026, 3, 2, 6,
                                                         tzinfo=UTC).timestamp()
    assert time_key("06:30:15") == 6 * 3600 + 30 * 60 + 15
    assert time_key("1772431200.5") == 1772431200.5
    assert time_key("soon") is None and time_key("nan") is None
    h = FeedHealth(0, 0)
    h.times_arrived("f", ["2026-03-02T06:00:00", "2026-03-02T05:00:00", "x", None,
                          "2026-03-02T05:30:00"])
    assert h.time_counts("f") == (1, 1)
    (ev,) = h.tick(0.0)
    assert ev.kind == "times" and ev.file == "f" and "1 earlier" in ev.detail
    assert h.tick(1.0) == []  # nothing new: said once


def test_watch_counts_time_stamps_going_backwards_or_unreadable_and_keeps_the_rows(
        tmp_path: Path) -> None:
    from linewatch.present.snapshot import feed_views
    from linewatch.store.db import Store

    p = tmp_path / "t.csv"
    p.write_text(TIMES)
    state = tmp_path / "state"
    proc = start_watch([str(p)], state)
    wait_caught_up(state, p)
    import time as _time

    _time.sleep(1.5)  # the counts go out on the next health tick (about once a second)
    out, _ = stop(proc)
    recs = records(out)
    (ev,) = [r for r in recs if r["type"] == "feed" and r["event"] == "times"]
    # back: 05:59 after 06:00:05; 06:01+01:00 (05:01 UTC) after 05:59; a bare time of day
    # after a full date and time. "soon" cannot be read; the empty one has no time at all
    assert (ev["backwards"], ev["unreadable"]) == (3, 1)
    summary = next(r for r in recs if r["type"] == "summary")
    assert summary["points"] == 8 and summary["rejected"] == 0
    store = Store(state, create=False)
    try:
        (fv,) = feed_views(store, _time.time(), 0)
    finally:
        store.close()
    assert (fv.times_backwards, fv.times_unreadable) == (ev["backwards"], ev["unreadable"])


def test_a_file_with_no_header_is_reported_once_with_the_count_and_what_to_do(
        tmp_path: Path) -> None:
    import time as _time

    from linewatch.present.snapshot import feed_views
    from linewatch.store.db import Store

    p = tmp_path / "nh.csv"
    p.write_text("".join(f"2026-03-02T06:{k // 60:02d}:{k % 60:02d},{12 + k / 1000}\n"
                         for k in range(276)))
    state = tmp_path / "state"
    proc = start_watch([str(p)], state)
    wait_caught_up(state, p)
    out, _ = stop(proc)
    recs = records(out)
    assert not [r for r in recs if r["type"] == "rejected"]  # not 276 identical lines
    (ev,) = [r for r in recs if r["type"] == "feed" and r["event"] == "no-header"]
    assert ev["file"] == str(p) and "276 lines" in ev["detail"]
    assert "column names" in ev["detail"]  # what to do
    with Store(state, create=False) as store:
        (fv,) = feed_views(store, _time.time(), 0)
    assert fv.unread == 276 and fv.rejected == 276 and fv.status == "no header"


def test_watch_says_a_wanted_column_is_missing_and_lists_the_columns_there(
        tmp_path: Path) -> None:
    p = tmp_path / "b.csv"
    p.write_text("time,x\n" + "".join(f"t{k},{5 + k / 10}\n" for k in range(5)))
    state = tmp_path / "state"
    proc = start_watch([str(p)], state, "--column", "nosuch")
    wait_caught_up(state, p)
    out, _ = stop(proc)
    (ev,) = [r for r in records(out) if r["type"] == "feed" and r["event"] == "warning"]
    assert "'nosuch'" in ev["detail"] and "time, x" in ev["detail"]


def _headerless_rows(start: int, n: int) -> str:
    return "".join(f"2026-03-02T06:{k // 60 % 60:02d}:{k % 60:02d},{12 + k / 1000}\n"
                   for k in range(start, start + n))


def test_a_file_with_no_header_raises_one_feed_alarm_that_returns_once_it_is_read(
        tmp_path: Path) -> None:
    """One condition, one alarm (common practice of alarm management, ISA-18.2): 276 lines
    without a header are one feed-health alarm, not 276; lines appended under the same
    condition add none; a header added at the top gets the file read and the alarm returns."""
    from linewatch.alarms.book import AlarmBook
    from linewatch.store.db import Store

    p = tmp_path / "nh.csv"
    p.write_text(_headerless_rows(0, 276))
    state = tmp_path / "state"
    proc = start_watch([str(p)], state)
    wait_caught_up(state, p)
    with p.open("a") as f:  # more of the same: still the one condition
        f.write(_headerless_rows(276, 30))
    wait_caught_up(state, p)
    out, _ = stop(proc)
    raised = [r for r in records(out) if r["type"] == "alarm" and r["rule"] == "no-header"]
    assert {r["id"] for r in raised} == {raised[0]["id"]}
    with Store(state, create=False) as store:
        book = AlarmBook(store)
        (alarm,) = book.alarms(include_closed=True)
        assert (alarm.kind, alarm.characteristic, alarm.rule) == ("feed-health", str(p),
                                                                  "no-header")
        assert alarm.active and alarm.signals == 1
        assert "column names" in book.reaction_plan(alarm)  # says what to do
    listed = subprocess.run([sys.executable, "-m", "linewatch", "alarms", "list",
                             "--state-dir", str(state), "--format", "jsonl"],
                            capture_output=True, text=True, timeout=60)
    assert [json.loads(line)["rule"] for line in listed.stdout.splitlines()] == ["no-header"]

    p.write_text("time,od\n" + _headerless_rows(0, 306))  # a header put at the top
    proc = start_watch([str(p)], state)
    wait_caught_up(state, p)
    out, _ = stop(proc)
    recs = records(out)
    assert [r for r in recs if r["type"] == "feed" and r["event"] == "header"]
    assert next(r for r in recs if r["type"] == "summary")["points"] == 306
    with Store(state, create=False) as store:
        (alarm,) = [a for a in AlarmBook(store).alarms(include_closed=True)
                    if a.kind == "feed-health"]
        assert not alarm.active  # returned to normal, still waiting for an acknowledgement
        (fv,) = _feed_views(store)
    assert fv.status == "following" and fv.unread == 0


def _feed_views(store):
    import time as _time

    from linewatch.present.snapshot import feed_views

    return feed_views(store, _time.time(), 0)


def test_with_several_feeds_each_file_lacking_a_wanted_column_says_so_with_its_columns(
        tmp_path: Path) -> None:
    """Several feeds read every numeric column; a `--column` name is still looked for in each
    file, and only the files lacking it are named, each with the columns it has."""
    from linewatch.store.db import Store

    a, b, j = tmp_path / "a.csv", tmp_path / "b.csv", tmp_path / "c.jsonl"
    a.write_text("time,od,wall\n" + "".join(f"t{k},{12 + k / 100},1.5\n" for k in range(30)))
    b.write_text("time;ovality\n" + "".join(f"t{k};1,{k % 7}\n" for k in range(30)))
    j.write_text("".join(json.dumps({"time": f"t{k}", "fill": 500 + k % 3}) + "\n"
                         for k in range(30)))
    cfg = tmp_path / "line.toml"
    cfg.write_text(f'[[feed]]\npaths = ["{a}"]\n[[feed]]\npaths = ["{b}"]\n'
                   f'[[feed]]\npaths = ["{j}"]\nlayout = "jsonl"\n')
    state = tmp_path / "state"
    proc = start_watch([], state, "-c", str(cfg), "--column", "od", "--column", "nosuch")
    for p in (a, b, j):
        wait_caught_up(state, p)
    out, _ = stop(proc)
    recs = records(out)
    warned = {r["file"]: r["detail"] for r in recs
              if r["type"] == "feed" and r["event"] == "warning"}
    assert set(warned) == {str(a), str(b), str(j)}
    assert "'nosuch'" in warned[str(a)] and "'od'" not in warned[str(a)]
    assert "time, od, wall" in warned[str(a)] and "nothing is charted" not in warned[str(a)]
    assert "'od', 'nosuch'" in warned[str(b)] and "time, ovality" in warned[str(b)]
    assert "nothing is charted" in warned[str(b)]
    assert "no key 'od', 'nosuch'" in warned[str(j)] and "time, fill" in warned[str(j)]
    assert next(r for r in recs if r["type"] == "summary" and r["characteristic"] == "od")[
        "points"] == 30
    with Store(state, create=False) as store:  # the feeds view shows it under each file
        views = {fv.file: fv for fv in _feed_views(store)}
    assert all(any("no " in n for n in views[str(p)].notes) for p in (a, b, j))
    assert {views[str(p)].status for p in (a, b, j)} == {"warning"}


def test_a_wanted_column_present_in_every_file_of_several_feeds_is_not_flagged(
        tmp_path: Path) -> None:
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    for p in (a, b):
        p.write_text("time,od\n" + "".join(f"t{k},{12 + k / 100}\n" for k in range(10)))
    cfg = tmp_path / "line.toml"
    cfg.write_text(f'[[feed]]\npaths = ["{a}"]\n[[feed]]\npaths = ["{b}"]\n')
    state = tmp_path / "state"
    proc = start_watch([], state, "-c", str(cfg), "--column", "od")
    for p in (a, b):
        wait_caught_up(state, p)
    out, _ = stop(proc)
    assert not [r for r in records(out) if r["type"] == "feed" and r["event"] == "warning"]
    from linewatch.store.db import Store

    with Store(state, create=False) as store:
        assert {fv.status for fv in _feed_views(store)} == {"following"}
