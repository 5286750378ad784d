"""Rows of a wide log with text columns kept beside the numbers: a sample id, a pass/fail
result, the time stamp. The per-line path (`RowParser`) with every one of its conventions; a
row whose text column is empty is rejected with the reason, like a row with a bad number, so
each kept row has all it was asked for."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import FeedError
from linewatch.domain.records import Notice, Rejected
from linewatch.feeds.batch import BatchBuilder
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


class _TextParser(RowParser):
    """A RowParser that also keeps the text of some columns of each row it keeps."""

    def __init__(self, feed: FeedConfig, file: str, numeric: list[str], text: list[str]
                 ) -> None:
        self.text_columns = [t for t in text if t not in numeric]
        super().__init__(feed, file, [*numeric, *self.text_columns], require_columns=True)
        self.text_idx: list[tuple[str, int]] = []
        self.kept_lines: list[int] = []
        self.kept_texts: dict[str, list[str]] = {t: [] for t in self.text_columns}
        self.kept_times: list[str | None] = []

    def _use_header(self, names: list[str], line_no: int, out: BatchBuilder) -> None:
        super()._use_header(names, line_no, out)
        if self.wanted is not None:
            self.text_idx = [(n, j) for n, j in self.wanted if n in self.text_columns]
            self.wanted = [(n, j) for n, j in self.wanted if n not in self.text_columns]

    def _wide_row(self, fields: list[str], line_no: int, out: BatchBuilder) -> None:
        if not self.usable:
            return
        texts = []
        for name, j in self.text_idx:
            t = fields[j].strip()
            if not t:
                out.reject(line_no, f"empty value in column '{name}'")
                return
            texts.append(t)
        before = out.rows
        if self.wanted:
            super()._wide_row(fields, line_no, out)
            if out.rows == before:  # rejected for a bad number
                return
        else:
            out.rows += 1
        self.kept_lines.append(line_no)
        for (name, _), t in zip(self.text_idx, texts, strict=True):
            self.kept_texts[name].append(t)
        self.kept_times.append(self._time_of(fields))


def read_labelled(source: str, feed: FeedConfig, numeric: list[str], text: list[str]
                  ) -> LabelledRows:
    """Read a whole wide log (path or '-') keeping the numbers of `numeric` and the text of
    `text` columns for every row that has them all; FeedError for a log of another layout or
    one lacking a column."""
    if feed.layout != "wide":
        raise FeedError(f"{source}: subgroups by sample id or clock window and pass/fail or "
                        f"count data are read from a wide CSV log (this feed is {feed.layout})")
    name, data = read_bytes(source)
    parser = _TextParser(feed, name, numeric, text)
    lines = data.split(b"\n")
    if lines and lines[-1] == b"":
        lines.pop()
    batch = parser.parse(lines, 1)
    if parser.header is None:
        raise FeedError(f"{name}: no header line")
    kept = np.asarray(parser.kept_lines, dtype=np.int64)
    numbers = {}
    for col in numeric:
        got = batch.values.get(col, np.zeros(0))
        numbers[col] = np.asarray(got, dtype=float)
    time_column = parser.header[parser.time_idx] if parser.time_idx is not None else None
    return LabelledRows(name, kept, numbers, parser.kept_texts, parser.kept_times,
                        batch.rejected, batch.notices, time_column)
