"""What the tailer must survive, each with real files, real renames and the real waker.

The reference is the content the test wrote: every good row exactly once, in order, with its
file and line; every junk row rejected with its line; the right feed event for each change.
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import pytest

from linewatch.config.model import FeedConfig
from linewatch.domain.records import FileState
from linewatch.feeds.identity import FINGERPRINT_BYTES
from linewatch.feeds.row_parser import MAX_LINE_BYTES
from linewatch.feeds.tailer import Tailer

HEADER = "time,part,od\n"


def row(k: int) -> str:
    return f"2026-03-02T06:{k // 60:02d}:{k % 60:02d},T-{k:05d},{25 + k / 1000:.3f}\n"


def value(k: int) -> float:
    return float(f"{25 + k / 1000:.3f}")


def append(path: Path, data: str | bytes) -> None:
    """Append the way a gauge does: open, write, close."""
    with open(path, "ab") as fh:
        fh.write(data.encode() if isinstance(data, str) else data)


def has(n: int, name: str = "od"):
    return lambda seen: len(seen.values.get(name, [])) >= n


def test_a_line_written_in_pieces_is_parsed_only_when_its_newline_arrives(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([log])
    f.until(has(1))
    line = row(2)
    for piece in (line[:7], line[7:19], line[19:-1]):
        append(log, piece)
        f.settle(2)
        assert f.seen.values["od"] == [value(1)]
    append(log, "\n")
    seen = f.until(has(2))
    assert seen.values["od"] == [value(1), value(2)]
    assert seen.lines["od"][-1] == (str(log), 3)
    # an unterminated last line when following stops is not a point
    append(log, row(3)[:-1])
    f.settle(3)
    f.tailer.close()
    assert seen.values["od"] == [value(1), value(2)]
    state = f.seen.chunks[-1].state
    assert state is not None and state.next_line == 4


def test_rename_and_create_rotation_reads_the_old_file_to_its_end_then_the_new(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    f = follow([log])
    f.until(has(2))
    with open(log, "a") as writer:  # the writer keeps its handle across the rename
        writer.write(row(3))
        writer.flush()
        os.rename(log, tmp_path / "log.csv.1")
        writer.write(row(4))
        writer.flush()
    append(log, HEADER + row(5))
    seen = f.until(has(4))
    assert seen.values["od"] == [value(k) for k in (1, 2, 3, 4, 5)]
    assert [ln for _, ln in seen.lines["od"]] == [2, 3, 4, 5, 2]
    rotated = [e for e in seen.events if e.kind == "rotated"]
    assert len(rotated) == 1 and "log.csv.1" in rotated[0].detail
    append(log, row(6))
    assert f.until(has(6)).values["od"][-1] == value(6)


def test_a_rotated_file_that_still_matches_the_pattern_is_not_read_twice(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    f = follow([tmp_path / "log.csv*"])
    f.until(has(2))
    os.rename(log, tmp_path / "log.csv.1")
    append(tmp_path / "log.csv.1", row(3))
    append(log, HEADER + row(4))
    seen = f.until(has(4))
    f.settle(3)
    assert sorted(seen.values["od"]) == [value(k) for k in (1, 2, 3, 4)]


def test_copy_and_truncate_restarts_at_zero_and_says_so(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2) + row(3))
    f = follow([log])
    f.until(has(3))
    shutil.copy(log, tmp_path / "log.csv.1")
    with open(log, "r+b") as fh:
        fh.truncate(0)
    append(log, HEADER + row(4))
    seen = f.until(has(4))
    assert seen.values["od"] == [value(k) for k in (1, 2, 3, 4)]
    assert seen.lines["od"][-1] == (str(log), 2)
    assert seen.kinds().count("truncated") == 1


def test_a_copy_onto_the_log_with_the_same_rows_reads_only_the_new_ones(tmp_path, follow):
    # copying onto an existing file truncates it, then writes: for a moment it is shorter
    log = tmp_path / "log.csv"
    before = HEADER + row(1) + row(2) + row(3)
    append(log, before)
    f = follow([log])
    f.until(has(3))
    after = (before + row(4)).encode()
    with open(log, "wb") as fh:  # truncates
        fh.write(after[:20])
        fh.flush()
        f.settle(2)  # the tailer looks while the copy is half done
        fh.write(after[20:])
    seen = f.until(has(4))
    f.settle(2)
    assert seen.values["od"] == [value(k) for k in (1, 2, 3, 4)]
    assert "truncated" not in seen.kinds()


def test_truncated_and_rewritten_past_the_old_size_is_caught_by_the_fingerprint(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([log])
    f.until(has(1))
    # truncate and write more than before in one go, before the tailer looks again
    log.write_text("time,part,od\n" + "".join(row(k) for k in range(100, 110)))
    seen = f.until(has(11))
    assert seen.values["od"] == [value(1)] + [value(k) for k in range(100, 110)]
    assert "truncated" in seen.kinds()


def test_delete_and_later_recreate(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([tmp_path / "*.csv"])
    f.until(has(1))
    assert f.tailer.status() == {str(log): "reading"}
    log.unlink()
    f.until(lambda s: "vanished" in s.kinds())
    assert f.tailer.status() == {str(log): "gone"}
    append(log, HEADER + row(2))
    seen = f.until(has(2))
    assert seen.values["od"] == [value(1), value(2)]
    assert seen.lines["od"] == [(str(log), 2), (str(log), 2)]
    assert seen.kinds().count("appeared") == 2
    assert "waiting" not in seen.kinds()  # only a pattern that never matched is waiting


def test_a_folder_that_does_not_exist_yet_is_waited_for(tmp_path, follow):
    later = tmp_path / "not" / "yet"
    f = follow([later / "*.csv"])
    f.until(lambda s: "waiting" in s.kinds())
    assert "does not exist" in f.seen.events[0].detail
    later.mkdir(parents=True)
    append(later / "shift-a.csv", HEADER + row(1))
    seen = f.until(has(1))
    assert seen.lines["od"] == [(str(later / "shift-a.csv"), 2)]
    # tomorrow's file is picked up as well
    append(later / "shift-b.csv", HEADER + row(2))
    assert f.until(has(2)).lines["od"][-1] == (str(later / "shift-b.csv"), 2)


def test_header_repeats_crlf_bom_blank_and_comment_lines_live(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, b"\xef\xbb\xbf" + HEADER.replace("\n", "\r\n").encode())
    f = follow([log])
    append(log, row(1).replace("\n", "\r\n") + "\r\n# operator: new coil\r\n")
    append(log, HEADER + row(2))  # a writer restarted
    seen = f.until(has(2))
    assert seen.rejected == []
    assert seen.values["od"] == [value(1), value(2)]
    assert [ln for _, ln in seen.lines["od"]] == [2, 6]


def test_cp1252_feed_and_invalid_bytes_in_a_utf8_feed(tmp_path, follow):
    win = tmp_path / "win.csv"
    append(win, "Zeit;Ø außen\n06:00;25,5\n".encode("cp1252"))
    f = follow([win], FeedConfig(paths=[], encoding="cp1252"))
    assert f.until(has(1, "Ø außen")).values["Ø außen"] == [25.5]
    utf = tmp_path / "utf.csv"
    append(utf, HEADER + row(1))
    append(utf, b"2026-03-02T06:00:0\xff,T-x,25.5\n")  # a cp1252 byte in a UTF-8 file
    append(utf, row(2) + "2026-03-02T06:01:00,T-\u00d8,25.5\n")  # proper UTF-8 text
    append(utf, b"2026-03-02T06:01:00,T-\xc3,25.5\n")  # a cut multi-byte character
    g = follow([utf])
    seen = g.until(lambda s: has(3)(s) and len(s.rejected) == 2)
    assert seen.values["od"] == [value(1), value(2), 25.5]
    assert [(r.line, "utf-8" in r.reason) for r in seen.rejected] == [(3, True), (6, True)]


def test_long_csv_json_lines_and_semicolon_decimal_comma(tmp_path, follow):
    long_log = tmp_path / "long.csv"
    append(long_log, "time,characteristic,value\n06:00,od,25.0\n06:00,wall,1.5\n")
    lf = follow([long_log], FeedConfig(paths=[], layout="long"))
    assert lf.until(has(1, "wall")).values == {"od": [25.0], "wall": [1.5]}
    js = tmp_path / "gauge.jsonl"
    f = follow([js], FeedConfig(paths=[], layout="jsonl"))
    append(js, json.dumps({"time": "06:00", "od": 25.0, "wall": 1.5}) + "\n")
    append(js, json.dumps({"time": "06:01", "od": 25.2, "wall": 1.4}) + "\n")
    assert f.until(has(2, "wall")).values == {"od": [25.0, 25.2], "wall": [1.5, 1.4]}
    eu = tmp_path / "eu.csv"
    append(eu, "Zeit;od\n06:00;25,125\n")
    g = follow([eu])
    assert g.until(has(1)).values["od"] == [25.125]


def test_junk_rows_are_rejected_and_counted_and_the_feed_goes_on(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([log])
    f.until(has(1))
    append(log, "shift change\n")  # text
    append(log, "2026-03-02T06:00:09,T-9,\n")  # empty value
    append(log, "2026-03-02T06:00:09,25.1\n")  # wrong field count
    append(log, b"\x00\x00\x1b[2J\xfe\xff\x00\n")  # binary noise
    append(log, row(2))
    seen = f.until(has(2))
    assert seen.values["od"] == [value(1), value(2)]
    assert [r.line for r in seen.rejected] == [3, 4, 5, 6]
    assert all(r.file == str(log) and r.reason for r in seen.rejected)


def test_a_line_without_newline_for_megabytes_is_bounded_and_rejected(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([log])
    f.until(has(1))
    block = b"9" * (256 << 10)
    for _ in range(12):  # 3 MiB of one line, written in pieces
        append(log, block)
        f.poll()
    held = f.tailer._followed[str(log)].pending  # the only copy of the line in memory
    assert len(held) <= MAX_LINE_BYTES + 1
    append(log, "\n" + row(2))
    seen = f.until(has(2))
    assert seen.values["od"] == [value(1), value(2)]
    assert [r.line for r in seen.rejected] == [3]
    assert "longer than" in seen.rejected[0].reason
    assert seen.lines["od"][-1] == (str(log), 4)


def test_restart_resumes_exactly_from_the_saved_state(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + "".join(row(k) for k in range(1, 4)) + row(4)[:9])
    f = follow([log])
    f.until(has(3))
    saved = {c.path: c.state for c in f.seen.chunks if c.state is not None}
    f.tailer.close()
    append(log, row(4)[9:] + row(5))
    g = follow([log], saved=saved)
    seen = g.until(has(2))
    g.settle(2)
    assert seen.values["od"] == [value(4), value(5)]  # nothing read twice, nothing skipped
    assert [ln for _, ln in seen.lines["od"]] == [5, 6]
    assert seen.kinds() == ["appeared"]


def test_restart_after_the_file_was_replaced_reads_the_new_file_from_the_start(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    f = follow([log])
    f.until(has(2))
    saved = {c.path: c.state for c in f.seen.chunks if c.state is not None}
    f.tailer.close()
    log.unlink()
    append(tmp_path / "other", "x")  # keep the old inode number from being reused at once
    append(log, HEADER + row(7))
    seen = follow([log], saved=saved).until(has(1))
    assert seen.values["od"] == [value(7)]
    assert "replaced" in seen.kinds()


def test_restart_after_rotation_picks_up_the_renamed_file_where_it_stopped(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    f = follow([tmp_path / "log.csv*"])
    f.until(has(2))
    saved = {c.path: c.state for c in f.seen.chunks if c.state is not None}
    f.tailer.close()
    append(log, row(3))
    os.rename(log, tmp_path / "log.csv.1")
    append(log, HEADER + row(4))
    g = follow([tmp_path / "log.csv*"], saved=saved)
    seen = g.until(has(2))
    g.settle(2)
    assert sorted(seen.values["od"]) == [value(3), value(4)]


@pytest.mark.parametrize("rows_before", [3, 59])  # shorter and longer than the fingerprint
def test_a_copy_renamed_over_the_log_goes_on_where_reading_stopped(
    tmp_path, follow, rows_before
):
    # a sync tool writes a fresh copy and renames it over the log
    log = tmp_path / "log.csv"
    first = HEADER + "".join(row(k) for k in range(1, rows_before + 1))
    assert (len(first) > FINGERPRINT_BYTES) == (rows_before > 30)
    append(log, first)
    f = follow([log])
    f.until(has(rows_before))
    tmp = tmp_path / ".log.csv.partial"
    tmp.write_text(first + row(60) + row(61))
    os.replace(tmp, log)
    seen = f.until(has(rows_before + 2))
    f.settle(2)
    assert seen.values["od"] == [value(k) for k in (*range(1, rows_before + 1), 60, 61)]
    assert "replaced" in seen.kinds() and "rotated" not in seen.kinds()


def test_max_bytes_splits_a_backlog_into_chunks(tmp_path) -> None:
    log = tmp_path / "log.csv"
    append(log, HEADER + "".join(row(k) for k in range(1000)))
    t = Tailer([], None, None, patterns=[str(log)])
    got: list[int] = []
    polls = 0
    while True:
        chunks = t.poll(max_bytes=4096)
        polls += 1
        for c in chunks:
            if c.batch is not None:
                got.extend(int(n) for n in c.batch.lines.get("od", []))
        done, total = t.backlog()
        assert 0 < done <= total == os.path.getsize(log)
        if not any(c.more for c in chunks):
            break
    t.close()
    assert got == list(range(2, 1002))
    assert polls >= os.path.getsize(log) // 4096
    assert done == total


def test_saved_state_survives_being_a_plain_record(tmp_path) -> None:
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    t = Tailer([], None, None, patterns=[str(log)])
    state = next(c.state for c in t.poll() if c.state is not None)
    t.close()
    copy = FileState(**{k: getattr(state, k) for k in FileState.__dataclass_fields__})
    append(log, row(2))
    t2 = Tailer([], None, {copy.path: copy}, patterns=[str(log)])
    chunks = t2.poll()
    t2.close()
    assert [list(c.batch.values["od"]) for c in chunks if c.batch] == [[value(2)]]


def test_restart_after_rotation_reads_the_last_rows_of_the_renamed_file(tmp_path, follow):
    # the pattern names only the live file; the rows the old file got while we were stopped
    # are still read, once
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    f = follow([log])
    f.until(has(2))
    saved = {c.path: c.state for c in f.seen.chunks if c.state is not None}
    f.tailer.close()
    append(log, row(3))
    os.rename(log, tmp_path / "log.csv.1")
    append(log, HEADER + row(4))
    g = follow([log], saved=saved)
    seen = g.until(has(2))
    g.settle(2)
    assert seen.values["od"] == [value(3), value(4)]
    assert seen.lines["od"] == [(str(tmp_path / "log.csv.1"), 4), (str(log), 2)]
    assert "rotated" in seen.kinds()


def test_polling_mode_follows_appends_and_rotation_without_events(tmp_path, follow):
    # network shares deliver no file-system events: the waker wakes on its beat instead
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([log], poll_seconds=0.1)
    assert f.waker is not None and f.waker.mode == "poll"
    f.until(has(1))
    append(log, row(2))
    os.rename(log, tmp_path / "log.csv.1")
    append(log, HEADER + row(3))
    seen = f.until(has(3))
    assert seen.values["od"] == [value(1), value(2), value(3)]
    assert "rotated" in seen.kinds()


def test_rows_a_file_already_held_carry_its_write_time_and_new_rows_carry_none(
    tmp_path, follow
):
    """Catching up on a history: the rows were written when the file last changed, not when
    they were read. Rows appended while following were written just now."""
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    two_hours_ago = os.stat(log).st_mtime - 7200
    os.utime(log, (two_hours_ago, two_hours_ago))
    f = follow([log])
    f.until(has(2))
    caught_up = [c for c in f.seen.chunks if c.batch is not None]
    assert [c.written_at for c in caught_up] == [two_hours_ago]
    append(log, row(3))
    f.until(has(3))
    live = [c for c in f.seen.chunks if c.batch is not None][1:]
    assert live and all(c.written_at is None for c in live)


def test_a_rotated_file_started_without_a_header_keeps_the_columns(tmp_path, follow):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1) + row(2))
    f = follow([log])
    f.until(has(2))
    os.rename(log, tmp_path / "log.csv.1")
    append(log, row(3) + row(4))  # the logger writes its header only once
    seen = f.until(has(4))
    f.settle(2)
    assert seen.values["od"] == [value(1), value(2), value(3), value(4)]
    assert seen.lines["od"][-2:] == [(str(log), 1), (str(log), 2)]
    assert not seen.rejected and list(seen.values) == ["od"]


def test_after_a_restart_a_file_that_began_without_a_header_is_read_the_same_way(
    tmp_path, follow
):
    log = tmp_path / "log.csv"
    append(log, HEADER + row(1))
    f = follow([log])
    f.until(has(1))
    os.rename(log, tmp_path / "log.csv.1")
    append(log, row(2) + row(3))  # no header in the new file
    f.until(has(3))
    last = [c.state for c in f.seen.chunks if c.path == str(log) and c.state is not None][-1]
    assert last.header == ("time", "part", "od")  # what the store keeps with the offset
    f.tailer.close()
    append(log, row(4))  # written while linewatch was stopped
    again = follow([log], saved={str(log): last})
    seen = again.until(has(1))
    again.settle(2)
    assert seen.values["od"] == [value(4)] and not seen.rejected
    assert seen.lines["od"] == [(str(log), 3)]
