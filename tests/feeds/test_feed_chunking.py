"""However a log is written — one byte at a time or all at once — the tailer hands out exactly
the rows of the whole file, in order, each once.

Reference: the per-line parser run once over the complete lines of the final file (what a
reader of the finished file sees, minus an unterminated last line).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from linewatch.config import FeedConfig
from linewatch.feeds import formats
from linewatch.feeds.formats import FAST_BLOCK_BYTES, RowParser
from linewatch.feeds.tailer import Tailer

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


@settings(max_examples=120, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(streams(), st.booleans())
def test_any_write_chunking_yields_every_row_once_in_order(
    tmp_path: Path, case, whole_buffer: bool
) -> None:
    data, cuts, budget = case
    # whole_buffer: every block goes through the numpy path instead of line by line
    formats.FAST_BLOCK_BYTES = 0 if whole_buffer else FAST_BLOCK_BYTES
    folder = Path(tempfile.mkdtemp(dir=tmp_path))
    log = folder / "log.csv"
    log.write_bytes(b"")
    feed = FeedConfig(paths=[str(log)], encoding="latin-1")
    tailer = Tailer([feed])
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
        formats.FAST_BLOCK_BYTES = FAST_BLOCK_BYTES
    assert (vals, lines, rejected) == reference(data)
