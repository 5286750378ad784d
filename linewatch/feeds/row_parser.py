"""The per-line path: complete log lines of one file -> `Batch`, defining every row convention.

The whole-buffer path (`whole_buffer.py`) must give the same result for the same bytes (a
property test holds them equal); it sends every row it does not handle itself through
`RowParser.feed_line`. The conventions, for every layout:

- A trailing ``\\n`` and any ``\\r`` before it are dropped; a UTF-8 byte-order mark at the start of
  a line is dropped. Blank lines and lines starting with ``#`` are skipped (neither points nor
  rejected).
- A line longer than `MAX_LINE_BYTES`, a line holding control bytes (binary noise; tab allowed)
  or bytes that are not valid in the feed's encoding is rejected with its reason.
- Numbers: surrounding blanks ignored; a decimal comma is read when the feed says
  ``decimal = ","`` or the delimiter is ``;``. Empty, non-numeric, ``nan`` and infinite values are
  rejected, and so is ``_`` inside a number. A finite value beyond ±`MAX_MAGNITUDE` (1e100) is
  rejected as out of range: no gauge reads such a number, and the statistics square values and
  their differences, which overflow to infinity (and limits to NaN) past about 1.3e154.
- Wide CSV: the first row is the header (delimiter detected from it among ``,`` ``;`` tab unless
  configured); the same header repeated later (a writer restarted) is skipped. A row with the
  wrong number of fields, or with a bad value in any wanted column, is rejected as a whole:
  it is a point for no characteristic. Characteristics are named by their column.
- Long CSV: a name column and a value column; the names are the characteristics. Rows naming a
  characteristic that was not asked for are skipped silently.
- JSON lines: see `json_lines.py`.
- Without explicit columns, the characteristics of a wide feed are decided at its first data row
  that holds a number: every column (or key) with a number there, except the time column.
- The time column is ``time_column`` from the feed, or else the first column named like a time
  (`TIME_NAMES`, any case). Its text is kept as is (trimmed), empty -> None.
"""

from __future__ import annotations

import csv
import math
import re

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import FeedError
from linewatch.domain.records import Notice
from linewatch.feeds.batch import Batch, BatchBuilder
from linewatch.feeds.json_lines import JsonRows
from linewatch.feeds.values import (
    float_of,
    is_time_name,
    lacking,
    parse_number,
    value_problem,
)

MAX_LINE_BYTES = 1 << 20
BOM = b"\xef\xbb\xbf"
_CONTROL = bytes(b for b in range(32) if b != 9) + b"\x7f"
_AUTO_DELIMITERS = (",", ";", "\t")


def detect_delimiter(text: str) -> str:
    """The delimiter among `,` `;` tab that occurs most often outside quotes (`,` if none)."""
    counts = {d: 0 for d in _AUTO_DELIMITERS}
    quoted = False
    for ch in text:
        if ch == '"':
            quoted = not quoted
        elif not quoted and ch in counts:
            counts[ch] += 1
    best = max(_AUTO_DELIMITERS, key=lambda d: counts[d])
    return best if counts[best] else ","


_DATE_TIME = re.compile(
    r"\d{1,4}[-/.]\d{1,2}[-/.]\d{1,4}(?:[T ]\d{1,2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?)?"
    r"(?:Z|[+-]\d{2}:?\d{2})?"
)


def looks_like_data(fields: list[str], decimal_comma: bool) -> bool:
    """At least half the fields are numbers or dates and times: a row, not column names."""
    data = sum(
        1 for f in fields
        if parse_number(f, decimal_comma) is not None or _DATE_TIME.fullmatch(f) is not None
    )
    return data > 0 and 2 * data >= len(fields)


def time_index(names: list[str], configured: str | None) -> int | None:
    """The time column: the configured one, or else the first named like a time."""
    if configured:
        return names.index(configured) if configured in names else None
    for j, n in enumerate(names):
        if is_time_name(n):
            return j
    return None



class RowParser:
    """Turns complete lines of one file into a Batch, remembering the header between calls.

    `columns` lists the wanted columns (wide) or characteristic names (long); None takes every
    numeric column. With `require_columns` a header lacking a wanted column raises
    LinewatchError (the batch command); otherwise the header line is rejected with the reason
    and the columns that are there are used (a live feed must keep going). `expected` names
    columns asked for while every column is read (one list for several feeds, each holding
    some): a wide header or first JSON object lacking one gets a notice listing what it has.
    """

    def __init__(
        self,
        feed: FeedConfig,
        file: str,
        columns: list[str] | None = None,
        *,
        require_columns: bool = False,
        keep_times: bool = True,
        expected: list[str] | None = None,
        text_columns: list[str] | None = None,
    ) -> None:
        self.feed = feed
        # wide CSV: columns whose text is kept beside the numbers (a sample id, a pass/fail
        # result); a row whose text column is empty is rejected, so each kept row has them all
        self.text_columns = list(text_columns or [])
        self.file = file
        self.columns = list(columns) if columns is not None else None
        self.expected = list(expected) if expected and columns is None else None
        self.require_columns = require_columns
        self.keep_times = keep_times  # False: every time is None (a reader that needs none)
        self.decimal_comma = feed.decimal == ","
        self.previous_header: tuple[str, ...] | None = None  # kept across `reset`
        self.reset()

    def reset(self) -> None:
        """Forget the header: the file starts again (truncated, replaced, new file)."""
        self.header: tuple[str, ...] | None = None
        self.delimiter: str = "," if self.feed.delimiter == "auto" else self.feed.delimiter
        self.time_idx: int | None = None
        # wide CSV: (characteristic, field index); None until decided
        self.wanted: list[tuple[str, int]] | None = None
        self.text_idx: list[tuple[str, int]] = []
        self.name_idx = -1
        self.value_idx = -1
        self.usable = True
        self.headerless = False  # began with data and no header to go by (said once)
        self.names_seen: dict[str, None] = {}  # long rows and JSON keys, in order of appearance
        self.json = JsonRows(self.feed, self.columns, self.names_seen, self.keep_times,
                             self.expected)

    @property
    def rows_named(self) -> bool:
        """True when rows name their characteristic one by one (long CSV, JSON objects with
        the name key), so no header says which characteristics the file holds."""
        return self.feed.layout == "long" or self.json.long_rows

    @property
    def ready(self) -> bool:
        """True once later rows no longer change what the parser extracts."""
        if self.feed.layout == "jsonl":
            return self.json.ready
        if self.header is None:
            return False
        return self.feed.layout == "long" or self.wanted is not None or not self.usable

    def prime(self, lines: list[bytes]) -> None:
        """Read the start of a file for its header (and column choice) without keeping rows."""
        self.parse(lines, 1)

    def prime_header(self, first_line: bytes) -> None:
        """Learn the header from the file's first line when resuming in the middle."""
        self.prime([first_line])

    def parse(self, lines: list[bytes], first_line_no: int) -> Batch:
        """Parse `lines` (complete, with or without their newline) numbered from first_line_no."""
        out = BatchBuilder(self.file)
        for k, raw in enumerate(lines):
            self.feed_line(raw, first_line_no + k, out)
        return out.batch()

    # one line ------------------------------------------------------------------------------

    def feed_line(self, raw: bytes, line_no: int, out: BatchBuilder) -> None:
        """Parse one line into `out` (values, or a rejection, or nothing for skipped lines)."""
        if raw.endswith(b"\n"):
            raw = raw[:-1]
        raw = raw.rstrip(b"\r")
        if len(raw) > MAX_LINE_BYTES:
            out.reject(line_no, f"line longer than {MAX_LINE_BYTES} bytes")
            return
        if raw.startswith(BOM):
            raw = raw[3:]
        if len(raw.translate(None, _CONTROL)) != len(raw):
            if self.header is None and self.feed.layout != "jsonl":  # where the header goes
                problem = ("the header line holds control bytes: column names must be plain "
                           "text (check what the logger writes first)")
                if self.require_columns:
                    raise FeedError(f"{self.file}: line {line_no}: {problem}")
                out.reject(line_no, problem)
                return
            out.reject(line_no, "binary data (control bytes) in line")
            return
        try:
            text = raw.decode(self.feed.encoding)
        except UnicodeDecodeError as exc:
            out.reject(line_no, f"bytes not valid {self.feed.encoding} at column {exc.start + 1}")
            return
        stripped = text.strip()
        if not stripped or stripped.startswith("#"):
            return
        if self.feed.layout == "jsonl":
            self.json.line(stripped, line_no, out)
            return
        if self.header is None and not self._header_line(text, line_no, out):
            return
        assert self.header is not None
        fields = self._split(text)
        # a repeated header (a writer restarted); the first name rules most rows out cheaply
        if fields[0].strip() == self.header[0] and tuple(f.strip() for f in fields) == self.header:
            return
        if len(fields) != len(self.header):
            out.reject(line_no, f"expected {len(self.header)} fields, found {len(fields)}")
            return
        if self.feed.layout == "long":
            self._long_row(fields, line_no, out)
        else:
            self._wide_row(fields, line_no, out)

    def _split(self, text: str) -> list[str]:
        if '"' not in text:
            return text.split(self.delimiter)
        try:
            return next(csv.reader([text], delimiter=self.delimiter), [])
        except csv.Error:  # a quoted field beyond the csv module's size limit
            return text.split(self.delimiter)

    def _header_line(self, text: str, line_no: int, out: BatchBuilder) -> bool:
        """Take a file's first line as its header. True when it is a data row instead, read
        under the header this path had before (a writer that starts a rotated file without
        one); a first line of data with no header to go by is rejected."""
        if self.feed.delimiter == "auto":
            self.delimiter = detect_delimiter(text)
        self.decimal_comma = self.feed.decimal == "," or self.delimiter == ";"
        names = [f.strip() for f in self._split(text)]
        if looks_like_data(names, self.decimal_comma):
            before = self.previous_header
            if before is not None and len(before) == len(names):
                self._use_header(list(before), line_no, out)
                return True
            problem = "first line holds numbers and times, not a header of column names"
            if self.require_columns:
                raise FeedError(f"{self.file}: line {line_no}: {problem}")
            # a live feed: said once for the file, with what to do, and the lines counted
            if not self.headerless:
                self.headerless = True
                out.notices.append(Notice(self.file, line_no, (
                    f"{problem}, and no earlier file on this path had a header: its lines are "
                    "not read. Have the logger write a line of column names first (e.g. "
                    "time,od,wall), or add one at the top: the file is then read from the "
                    "start"), kind="no-header"))
            out.unread += 1
            return False
        self._use_header(names, line_no, out)
        return False

    def _use_header(self, names: list[str], line_no: int, out: BatchBuilder) -> None:
        twice = [n for n in dict.fromkeys(names) if n and names.count(n) > 1]
        for name in twice:  # said once per file: the header is read once per file
            where = ", ".join(str(j + 1) for j, n in enumerate(names) if n == name)
            out.notices.append(Notice(self.file, line_no, (
                f"column '{name}' appears {names.count(name)} times in the header (fields "
                f"{where}); only the first is read")))
        self.header = tuple(names)
        self.previous_header = self.header
        self.time_idx = time_index(names, self.feed.time_column)
        problems: list[str] = []
        if self.feed.time_column and self.time_idx is None:
            problems.append(f"no time column '{self.feed.time_column}'")
        if self.feed.layout == "long":
            nc, vc = self.feed.name_column, self.feed.value_column
            missing = [c for c in (nc, vc) if c not in names]
            if missing:
                problems.append("no column " + ", ".join(f"'{c}'" for c in missing))
                self.usable = False
            else:
                self.name_idx, self.value_idx = names.index(nc), names.index(vc)
        elif self.columns is not None:
            missing = [c for c in [*self.columns, *self.text_columns] if c not in names]
            if missing:
                problems.append("no column " + ", ".join(f"'{c}'" for c in missing))
            self.wanted = [(c, names.index(c)) for c in self.columns if c in names]
            self.text_idx = [(c, names.index(c)) for c in self.text_columns if c in names]
            if not self.wanted and not self.text_idx:
                self.usable = False
        elif self.expected is not None:
            problems += lacking(self.expected, names)
        if self.columns is None and self.text_columns:
            self.text_idx = [(c, names.index(c)) for c in self.text_columns if c in names]
        if problems:
            message = f"{'; '.join(problems)} (columns: {', '.join(names)})"
            if self.require_columns:
                raise FeedError(f"{self.file}: {message}")
            if not self.usable:
                message += "; nothing is read from this file"
            out.notices.append(Notice(self.file, line_no, message))  # no row is lost

    def _decide_columns(self, fields: list[str]) -> bool:
        assert self.header is not None
        seen: set[str] = set()
        wanted: list[tuple[str, int]] = []
        for j, name in enumerate(self.header):
            if j == self.time_idx or name in seen or name in self.text_columns:
                continue
            seen.add(name)
            v = float_of(fields[j], self.decimal_comma)
            if v is not None and math.isfinite(v):  # out of range still makes a numeric column
                wanted.append((name, j))
        if wanted:
            self.wanted = wanted
        return bool(wanted)

    def _time_of(self, fields: list[str]) -> str | None:
        if self.time_idx is None or not self.keep_times:
            return None
        return fields[self.time_idx].strip() or None

    def _wide_row(self, fields: list[str], line_no: int, out: BatchBuilder) -> None:
        if not self.usable:
            return
        if self.wanted is None and not self._decide_columns(fields) and not self.text_idx:
            out.reject(line_no, "no number in any column")
            return
        if self.wanted is None:
            self.wanted = []
        texts: list[tuple[str, str]] = []
        for name, j in self.text_idx:
            text = fields[j].strip()
            if not text:
                out.reject(line_no, f"empty value in column '{name}'")
                return
            texts.append((name, text))
        got: list[float] = []
        for name, j in self.wanted:
            v = parse_number(fields[j], self.decimal_comma)
            if v is None:
                out.reject(line_no, value_problem(fields[j], name, self.decimal_comma))
                return
            got.append(v)
        if not got and not texts:
            return
        time = self._time_of(fields)
        for (name, _), v in zip(self.wanted, got, strict=True):
            out.add(name, v, line_no, time)
        if self.text_idx:
            out.add_texts(texts, line_no, time)
        out.rows += 1

    def _long_row(self, fields: list[str], line_no: int, out: BatchBuilder) -> None:
        if not self.usable:
            return
        name = fields[self.name_idx].strip()
        if not name:
            out.reject(line_no, f"empty name in column '{self.feed.name_column}'")
            return
        self.names_seen[name] = None
        if self.columns is not None and name not in self.columns:
            return
        v = parse_number(fields[self.value_idx], self.decimal_comma)
        if v is None:
            out.reject(line_no, value_problem(fields[self.value_idx], self.feed.value_column,
                                                self.decimal_comma))
            return
        out.add(name, v, line_no, self._time_of(fields))
        out.rows += 1
