"""Rows of a whole wide log with text columns kept beside the numbers (a sample id, a pass/fail
result) and the time text: `RowParser`'s text columns, with every one of its conventions (a row
whose text column is empty is rejected with the reason, like a row with a bad number)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import FeedError
from linewatch.domain.records import Notice, Rejected
from linewatch.feeds.row_parser import RowParser
from linewatch.feeds.whole_file import read_bytes


@dataclass(slots=True)
class LabelledRows:
    """The kept rows of one log: line numbers, the numbers and texts asked for, time text."""

    file: str
    lines: np.ndarray
    numbers: dict[str, np.ndarray]
    texts: dict[str, list[str]]
    times: list[str | None]
    rejected: list[Rejected] = field(default_factory=list)
    notices: list[Notice] = field(default_factory=list)
    time_column: str | None = None  # the column the times came from (None: the log has none)


def read_labelled(source: str, feed: FeedConfig, numeric: list[str], text: list[str]
                  ) -> LabelledRows:
    """Read a whole wide log (path or '-') keeping the numbers of `numeric` and the text of
    `text` columns for every row that has them all; FeedError for a log of another layout or
    one lacking a column."""
    if feed.layout != "wide":
        raise FeedError(f"{source}: subgroups by sample id or clock window and pass/fail or "
                        f"count data are read from a wide CSV log (this feed is {feed.layout})")
    name, data = read_bytes(source)
    parser = RowParser(feed, name, numeric, require_columns=True,
                       text_columns=[t for t in text if t not in numeric])
    lines = data.split(b"\n")
    if lines and lines[-1] == b"":
        lines.pop()
    batch = parser.parse(lines, 1)  # (rows with text columns go the per-line way anyway)
    if parser.header is None:
        raise FeedError(f"{name}: no header line")
    numbers = {col: np.asarray(batch.values.get(col, np.zeros(0)), dtype=float)
               for col in numeric}
    if parser.text_columns:
        kept = np.asarray(batch.text_lines, dtype=np.int64)
        times = list(batch.text_times)
    else:
        kept = np.asarray(batch.lines.get(numeric[0], np.zeros(0)), dtype=np.int64)
        times = list(batch.times.get(numeric[0], []))
    texts = {t: list(batch.texts.get(t, [])) for t in text}
    time_column = parser.header[parser.time_idx] if parser.time_idx is not None else None
    return LabelledRows(name, kept, numbers, texts, times, batch.rejected, batch.notices,
                        time_column)
