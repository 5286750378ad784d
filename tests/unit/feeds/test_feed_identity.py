"""The decision table of file identity, without files: what a followed log went through, from
what was known of it and what a stat and its first bytes show now.

The situations are the usual ways log files are turned over (common practice): logrotate's
`create` mode renames the live file away and a new one is created under the name; its
`copytruncate` mode copies the file and truncates it in place, and the writer goes on at the
start; `cp` onto an existing file truncates it and writes it again; sync tools write a copy
beside the file and rename it over the name (the old inode loses its last link).
"""

from __future__ import annotations

import pytest

from linewatch.domain.records import FileState
from linewatch.feeds.identity import (
    FINGERPRINT_BYTES,
    Seen,
    copy_goes_on,
    fingerprint,
    first_bytes_needed,
    in_place,
    moved,
    on_reopen,
    resting_change,
)

HEADER = b"time,part,od\n"
ROW = b"06:00:00,T-1,25.013\n"
LONG_START = (HEADER + ROW * 80)[:FINGERPRINT_BYTES]  # a beginning that tells files apart
GRACE = 2.0


def saved(head: bytes, offset: int, dev: int = 1, inode: int = 10, line: int = 7) -> FileState:
    return FileState("log.csv", dev, inode, fingerprint(head), offset, line, None)


# -- a saved position met again (restart, a resting file woken) -----------------------------


def test_the_same_file_grown_since_resumes_silently() -> None:
    got = on_reopen(saved(LONG_START, 2000), Seen(1, 10, 5000, LONG_START))
    assert got.resume and got.kind is None


def test_copytruncate_while_stopped_reads_from_the_start() -> None:
    # same inode, same beginning, but shorter than where reading stopped
    got = on_reopen(saved(HEADER, 2000), Seen(1, 10, 40, HEADER))
    assert not got.resume and got.kind == "truncated"
    assert "40 < 2000" in got.detail


def test_new_content_under_the_same_inode_is_read_from_the_start() -> None:
    got = on_reopen(saved(HEADER + ROW, 500), Seen(1, 10, 900, b"other,header\n1,2\n"))
    assert not got.resume and got.kind == "replaced" and "new content" in got.detail


def test_rotation_with_create_while_stopped_reads_the_new_file_from_the_start() -> None:
    # another inode that does not begin like ours: the name now holds a new file
    got = on_reopen(saved(HEADER + ROW, 500), Seen(1, 11, 30, HEADER + b"06:10"))
    assert not got.resume and got.kind == "replaced" and "another file" in got.detail


def test_a_copy_renamed_over_with_the_same_long_beginning_goes_on_at_the_same_line() -> None:
    got = on_reopen(saved(LONG_START, 3000, line=120), Seen(1, 11, 3500, LONG_START))
    assert got.resume and got.kind == "replaced" and "line 120" in got.detail


def test_a_new_inode_sharing_only_a_short_beginning_is_another_file() -> None:
    # a header alone does not tell two logs of the same gauge apart
    got = on_reopen(saved(HEADER, 13), Seen(1, 11, 400, HEADER + ROW))
    assert not got.resume and got.kind == "replaced" and "another file" in got.detail


def test_new_content_where_nothing_was_read_yet_starts_silently() -> None:
    got = on_reopen(saved(b"time,pa", 0), Seen(1, 10, 400, b"stamp,od\n"))
    assert not got.resume and got.kind is None  # nothing was read: nothing lost or repeated


# -- the open file, stat after stat ---------------------------------------------------------


def judge(size: int, pos: int, head: bytes, first: bytes | None,
          shrunk_since: float | None = None, now: float = 100.0):
    if not first_bytes_needed(size, pos, head):
        first = None  # the tailer reads nothing when nothing needs it
    return in_place(size, pos, head, first, shrunk_since, now, GRACE)


def test_an_unchanged_file_needs_no_read_and_goes_on() -> None:
    assert not first_bytes_needed(len(LONG_START) + 500, len(LONG_START) + 500, LONG_START)
    got = judge(len(LONG_START) + 500, len(LONG_START) + 500, LONG_START, None)
    assert got.why is None and not got.wait


def test_copytruncate_truncated_to_empty_waits_the_grace_then_reads_from_the_start() -> None:
    first = judge(0, 2000, LONG_START, b"", now=100.0)
    assert first.why is None and first.wait
    later = judge(0, 2000, LONG_START, b"", shrunk_since=first.shrunk_since, now=100.0 + GRACE)
    assert later.why is not None and "0 < 2000" in later.why and not later.wait


def test_copytruncate_with_new_rows_already_written_reads_from_the_start_at_once() -> None:
    got = judge(25, 2000, LONG_START, b"07:00:00,T-99,24.990\n")
    assert got.why is not None and "other first bytes" in got.why and not got.wait


def test_cp_onto_the_file_that_grows_back_within_the_grace_goes_on() -> None:
    shrunk = judge(100, 2000, LONG_START, LONG_START[:100], now=100.0)
    assert shrunk.wait
    grown = judge(2500, 2000, LONG_START, LONG_START, shrunk_since=shrunk.shrunk_since,
                  now=101.0)
    assert grown.why is None and not grown.wait and grown.shrunk_since is None


def test_first_bytes_rewritten_at_the_same_length_are_new_content() -> None:
    changed = b"X" + LONG_START[1:]
    got = judge(len(LONG_START) + 40, len(LONG_START), LONG_START, changed)
    assert got.why is not None and "first bytes changed" in got.why


def test_a_short_file_learns_more_of_its_beginning_as_it_grows() -> None:
    got = judge(len(HEADER + ROW), len(HEADER), HEADER, HEADER + ROW)
    assert got.why is None and got.head == HEADER + ROW


# -- the name points elsewhere ----------------------------------------------------------------


@pytest.mark.parametrize(("links", "name_head", "expected"), [
    (0, LONG_START, True),     # written beside and renamed over: the old inode lost its link
    (1, LONG_START, False),    # logrotate create: the old file lives on under another name
    (0, HEADER + b"07", False),  # a new file that only starts like ours
    (0, None, False),          # the new file cannot be read
])
def test_a_copy_goes_on_only_when_the_old_inode_is_gone_and_the_start_matches(
    links: int, name_head: bytes | None, expected: bool
) -> None:
    assert copy_goes_on(links, LONG_START, 3000, 3200, name_head) is expected


def test_a_copy_shorter_than_where_reading_stopped_does_not_go_on() -> None:
    assert not copy_goes_on(0, LONG_START, 3000, 2000, LONG_START)


def test_create_mode_rotation_names_the_old_file_and_reads_the_new_one() -> None:
    kind, detail = moved(True, "/logs/od.csv.1")
    assert kind == "rotated" and "/logs/od.csv.1" in detail and "new one" in detail


def test_a_name_that_is_gone_is_a_rotation_when_renamed_else_vanished() -> None:
    assert moved(False, "/logs/od.csv.1")[0] == "rotated"
    assert moved(False, None) == ("vanished", "deleted")


def test_a_resting_file_is_woken_only_by_a_change_and_told_apart_from_a_replacement() -> None:
    rest = (1, 10, 500, 111)
    assert resting_change(rest, 1, 10, 500, 111) == "unchanged"
    assert resting_change(rest, 1, 10, 800, 222) == "changed"
    assert resting_change(rest, 1, 11, 800, 222) == "other"
