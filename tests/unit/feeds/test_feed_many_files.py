"""A folder of many logs is followed with a bounded number of open handles.

Real files and the real waker; the tailer may hold only three handles here. The reference is
what the test wrote: every row exactly once, in order, from whichever file it was written to.
"""

from __future__ import annotations

import os
from pathlib import Path

from tests.unit.feeds.test_feed_tailer import HEADER, append, has, row, value


def days(folder: Path, n: int, rows_each: int) -> list[Path]:
    """`n` daily logs of `rows_each` rows; day d holds rows d*100 .. d*100 + rows_each - 1."""
    paths = []
    for d in range(n):
        p = folder / f"day{d:02d}.csv"
        append(p, HEADER + "".join(row(d * 100 + k) for k in range(rows_each)))
        paths.append(p)
    return paths


def values_of(seen, path: Path) -> list[float]:
    return [v for v, (f, _) in zip(seen.values["od"], seen.lines["od"], strict=True)
            if f == str(path)]


def test_twelve_files_are_read_whole_with_three_handles_and_a_quiet_one_wakes(tmp_path, follow):
    logs = days(tmp_path, 12, 5)
    f = follow([tmp_path / "*.csv"], max_open=3)
    most_open = 0

    def done_and_bounded(seen) -> bool:
        nonlocal most_open
        most_open = max(most_open, f.tailer.open_files)
        return has(60)(seen)

    seen = f.until(done_and_bounded)
    f.settle(3)
    assert most_open <= 3 and f.tailer.open_files <= 3
    for d, p in enumerate(logs):
        assert values_of(seen, p) == [value(d * 100 + k) for k in range(5)]
    # the first day's file has long been put to rest; a row appended to it is read once,
    # as a live row, and the line numbers go on
    append(logs[0], row(5))
    seen = f.until(has(61))
    assert values_of(seen, logs[0])[-1] == value(5)
    assert seen.lines["od"][-1] == (str(logs[0]), 7)
    assert f.seen.chunks[-1].written_at is None
    f.settle(3)
    assert len(seen.values["od"]) == 61 and f.tailer.open_files <= 3


def test_a_resting_file_renamed_away_is_read_to_its_end_under_its_new_name(tmp_path, follow):
    logs = days(tmp_path, 6, 3)
    f = follow([tmp_path / "*.csv*"], max_open=2)
    f.until(has(18))
    f.settle(2)
    first = logs[0]
    with open(first, "a") as writer:  # the writer keeps its handle across the rename
        writer.write(row(3))
        os.rename(first, str(first) + ".1")
        writer.write(row(4))
    append(first, HEADER + row(90))
    seen = f.until(has(21))
    f.settle(3)
    assert values_of(seen, Path(str(first) + ".1")) == [value(3), value(4)]
    assert values_of(seen, first)[-1] == value(90)
    assert len(seen.values["od"]) == 21  # nothing read twice
    assert "rotated" in f.seen.kinds()


def test_a_resting_file_deleted_is_said_vanished_and_a_new_one_is_read_from_its_start(
    tmp_path, follow
):
    logs = days(tmp_path, 5, 2)
    f = follow([tmp_path / "*.csv"], max_open=2)
    f.until(has(10))
    f.settle(2)
    logs[0].unlink()
    f.until(lambda seen: "vanished" in seen.kinds())
    append(logs[0], HEADER + row(50))
    seen = f.until(has(11))
    assert values_of(seen, logs[0])[-1] == value(50)


def test_one_poll_reads_a_bounded_amount_and_catches_up_file_by_file(tmp_path):
    from linewatch.feeds.tailer import Tailer

    logs = days(tmp_path, 6, 60)  # about 2 kB each
    size = logs[0].stat().st_size
    tailer = Tailer([], patterns=[str(tmp_path / "*.csv")])
    try:
        polls = []
        while not polls or polls[-1][-1].more:
            polls.append(tailer.poll(max_bytes=10 * size, poll_bytes=2 * size))
        read_per_poll = [[c.path for c in p if c.batch is not None] for p in polls]
        assert read_per_poll[0] == [str(logs[0]), str(logs[1])]
        assert [path for p in read_per_poll for path in p] == [str(p) for p in logs]
        values = [v for p in polls for c in p if c.batch is not None
                  for v in c.batch.values["od"]]
        assert values == [value(d * 100 + k) for d in range(6) for k in range(60)]
    finally:
        tailer.close()
