"""However a log is written — one byte at a time or all at once — the tailer hands out exactly
the rows of the whole file, in order, each once.

Reference: the per-line parser run once over the complete lines of the final file (what a
reader of the finished file sees, minus an unterminated last line).
"""

from __future__ import annotations

import tempfile
from collections.abc import Callable
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from linewatch.config.model import FeedConfig
from linewatch.feeds.row_parser import RowParser
from linewatch.feeds.tailer import Tailer
from linewatch.feeds.whole_buffer import FAST_BLOCK_BYTES

ROWS = st.one_of(
    st.builds(lambda k, v: f"06:{k:02d},T-{k},{v}\n", st.integers(0, 59),
              st.floats(-100, 100, allow_nan=False).map(lambda v: f"{v:.4f}")),
    st.sampled_from(["time,part,od\n", "\n", "# note\n", "junk\n", "06:00,T-1,\n",
                     "06:00,T-1,abc\n", "a,b,c,d\n", "06:00,T-1,25.5\r\n"]),
    st.binary(max_size=8).map(lambda b: b.decode("latin-1")),
)


@st.composite
def streams(draw: st.DrawFn) -> tuple[bytes, list[int], int]:
    body = "time,part,od\n" + "".join(draw(st.lists(ROWS, max_size=30)))
    data = body.encode("latin-1")
    cuts = sorted(set(draw(st.lists(st.integers(0, len(data)), max_size=12))))
    budget = draw(st.sampled_from([7, 64, 1 << 20]))
    return data, cuts, budget


def reference(data: bytes) -> tuple[list[float], list[int], list[tuple[int, str]]]:
    complete = data[: data.rfind(b"\n") + 1]
    lines = complete.split(b"\n")[:-1]
    b = RowParser(FeedConfig(paths=[], encoding="latin-1"), "log", None).parse(lines, 1)
    vals = [float(v) for v in b.values.get("od", [])]
    return vals, list(b.lines.get("od", [])), [(r.line, r.reason) for r in b.rejected]


def empty_log(tmp_path: Path) -> Path:
    """A new empty log in its own folder (one per example)."""
    log = Path(tempfile.mkdtemp(dir=tmp_path)) / "log.csv"
    log.write_bytes(b"")
    return log


def write_in_pieces(log: Path, data: bytes, cuts: list[int], tailer: Tailer,
                    drain: Callable[[], None]) -> None:
    """Append `data` cut at `cuts`, draining the tailer after each piece and at the end; then
    close it."""
    prev = 0
    try:
        for cut in [*cuts, len(data)]:
            with open(log, "ab") as fh:
                fh.write(data[prev:cut])
            prev = cut
            drain()
        drain()
    finally:
        tailer.close()


def fast_from(whole_buffer: bool) -> int:
    """The tailer's threshold for the whole-buffer path: 0 sends every block through the numpy
    path instead of line by line."""
    return 0 if whole_buffer else FAST_BLOCK_BYTES


@settings(max_examples=120, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(streams(), st.booleans())
def test_any_write_chunking_yields_every_row_once_in_order(
    tmp_path: Path, case, whole_buffer: bool
) -> None:
    data, cuts, budget = case
    log = empty_log(tmp_path)
    feed = FeedConfig(paths=[str(log)], encoding="latin-1")
    tailer = Tailer([feed], fast_block_bytes=fast_from(whole_buffer))
    vals: list[float] = []
    lines: list[int] = []
    rejected: list[tuple[int, str]] = []

    def drain() -> None:
        while True:
            chunks = tailer.poll(max_bytes=budget)
            for c in chunks:
                if c.batch is None:
                    continue
                vals.extend(np.asarray(c.batch.values.get("od", []), dtype=float).tolist())
                lines.extend(int(n) for n in c.batch.lines.get("od", []))
                rejected.extend((r.line, r.reason) for r in c.batch.rejected)
            if not any(c.more for c in chunks):
                return

    write_in_pieces(log, data, cuts, tailer, drain)
    assert (vals, lines, rejected) == reference(data)


LONG_ROWS = st.one_of(
    st.builds(lambda k, n, v: f"06:{k:02d},{n},{v}\n", st.integers(0, 59),
              st.sampled_from(["od", "wall", " od", "ovality"]),
              st.floats(-100, 100, allow_nan=False).map(lambda v: f"{v:.4f}")),
    st.sampled_from(["time,name,value\n", "\n", "# note\n", "junk\n", "06:00,od,\n",
                     "06:00,,1.5\n", "06:00,wall,abc\n", "a,b,c,d\n", "06:00,od,25.5\r\n"]),
    st.binary(max_size=8).map(lambda b: b.decode("latin-1")),
)
LONG_FEED = {"encoding": "latin-1", "layout": "long", "name_column": "name",
             "value_column": "value"}


@st.composite
def long_streams(draw: st.DrawFn) -> tuple[bytes, list[int], int]:
    body = "time,name,value\n" + "".join(draw(st.lists(LONG_ROWS, max_size=30)))
    data = body.encode("latin-1")
    cuts = sorted(set(draw(st.lists(st.integers(0, len(data)), max_size=12))))
    return data, cuts, draw(st.sampled_from([7, 64, 1 << 20]))


@settings(max_examples=120, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(long_streams(), st.booleans())
def test_any_write_chunking_of_a_long_layout_log_yields_every_row_once_in_order(
    tmp_path: Path, case, whole_buffer: bool
) -> None:
    data, cuts, budget = case
    log = empty_log(tmp_path)
    tailer = Tailer([FeedConfig(paths=[str(log)], **LONG_FEED)],
                    fast_block_bytes=fast_from(whole_buffer))
    got: dict[str, list[tuple[int, float]]] = {}
    rejected: list[tuple[int, str]] = []

    def drain() -> None:
        while True:
            chunks = tailer.poll(max_bytes=budget)
            for c in chunks:
                if c.batch is None:
                    continue
                for name, values in c.batch.values.items():
                    got.setdefault(name, []).extend(
                        zip((int(n) for n in c.batch.lines[name]),
                            np.asarray(values, dtype=float).tolist(), strict=True))
                rejected.extend((r.line, r.reason) for r in c.batch.rejected)
            if not any(c.more for c in chunks):
                return

    write_in_pieces(log, data, cuts, tailer, drain)
    complete = data[: data.rfind(b"\n") + 1]
    ref = RowParser(FeedConfig(paths=[], **LONG_FEED), "log", None).parse(
        complete.split(b"\n")[:-1], 1)
    expected = {name: list(zip(ref.lines[name], [float(v) for v in ref.values[name]],
                               strict=True)) for name in ref.values}
    assert got == expected
    assert rejected == [(r.line, r.reason) for r in ref.rejected]
