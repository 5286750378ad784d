"""Log rows -> columnar `Batch`: wide CSV, long CSV and JSON lines.

Two paths give the same result for the same bytes (a property test proves it): the per-line
code of `RowParser`, which defines every convention below, and a whole-buffer path for wide and
long CSV that converts the common case (plain ASCII rows, plain decimal numbers) with numpy and
sends only the unusual rows through the per-line code. `read_log` reads a whole file that way
(the `check` command); a live tail hands `RowParser.parse_block` each block of complete lines,
and blocks of at least FAST_BLOCK_BYTES take the whole-buffer path too.

The row conventions, for every layout:

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
- JSON lines: one object per line. An object holding the feed's name key (``name_column``) is a
  long row (name and ``value_column``); any other object is a wide row whose numeric fields are
  characteristics. Numbers may be JSON numbers or numeric strings.
- Without explicit columns, the characteristics of a wide feed are decided at its first data row
  that holds a number: every column (or key) with a number there, except the time column.
- The time column is ``time_column`` from the feed, or else the first column named like a time
  (`TIME_NAMES`, any case). Its text is kept as is (trimmed), empty -> None.
"""

from __future__ import annotations

import codecs
import csv
import json
import math
import re
import stat
import sys
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, overload

import numpy as np

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import LinewatchError
from linewatch.domain.records import MAX_MAGNITUDE, Notice, Rejected

MAX_LINE_BYTES = 1 << 20
FAST_BLOCK_BYTES = 32 << 10  # blocks at least this large take the whole-buffer path
TIME_NAMES = frozenset(
    {"time", "timestamp", "datetime", "date_time", "date", "ts", "time_utc", "timestamp_utc",
     "zeit", "measured_at", "recorded_at"}
)
BOM = b"\xef\xbb\xbf"
_CONTROL = bytes(b for b in range(32) if b != 9) + b"\x7f"
_AUTO_DELIMITERS = (",", ";", "\t")
_SHOWN = 40


class TimeColumn(Sequence[str | None]):
    """Time strings of one characteristic, kept as byte spans and decoded only when read.

    A million rows cost two integer arrays instead of a million Python strings; rows that came
    through the per-line path carry their decoded text in `extra`.
    """

    __slots__ = ("_buf", "_ends", "_extra", "_items", "_starts")

    def __init__(
        self,
        items: list[str | None] | None = None,
        *,
        buf: bytes = b"",
        starts: np.ndarray | None = None,
        ends: np.ndarray | None = None,
        extra: dict[int, str | None] | None = None,
    ) -> None:
        self._items = items
        self._buf = buf
        self._starts = starts if starts is not None else np.zeros(0, np.int64)
        self._ends = ends if ends is not None else np.zeros(0, np.int64)
        self._extra = extra or {}

    def __len__(self) -> int:
        return len(self._items) if self._items is not None else len(self._starts)

    @overload
    def __getitem__(self, i: int) -> str | None: ...
    @overload
    def __getitem__(self, i: slice) -> list[str | None]: ...
    def __getitem__(self, i: int | slice) -> str | list[str | None] | None:
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        if self._items is not None:
            return self._items[i]
        n = len(self._starts)
        if i < 0:
            i += n
        if not 0 <= i < n:
            raise IndexError(i)
        if i in self._extra:
            return self._extra[i]
        text = self._buf[int(self._starts[i]) : int(self._ends[i])].decode("ascii").strip()
        return text or None

    def __iter__(self) -> Iterator[str | None]:
        if self._items is not None:
            yield from self._items
            return
        buf, extra = self._buf, self._extra
        for i, (s, e) in enumerate(zip(self._starts.tolist(), self._ends.tolist(), strict=True)):
            if i in extra:
                yield extra[i]
            else:
                yield buf[s:e].decode("ascii").strip() or None

    def __eq__(self, other: object) -> bool:
        if isinstance(other, Sequence):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other, strict=True))
        return NotImplemented

    __hash__ = None  # type: ignore[assignment]

    def __repr__(self) -> str:
        head = ", ".join(repr(t) for t in self[:3])
        return f"TimeColumn([{head}{', ...' if len(self) > 3 else ''}] n={len(self)})"


@dataclass(slots=True)
class Batch:
    """Readings of one file, column by column, plus the rows that could not become points.

    `values[c]`, `lines[c]` (1-based) and `times[c]` (text or None) run in file order. A
    RowParser gives plain lists; `read_log` gives numpy arrays (float64, int64) and a lazy
    `TimeColumn`, so a million rows never become a million Python objects. Both index, iterate
    and take `len()` alike; use `np.asarray` or `len(v) == 0` rather than truth tests.
    `rows` counts data rows that gave at least one value.
    """

    file: str
    values: dict[str, Any] = field(default_factory=dict)  # list[float] | float64 array
    lines: dict[str, Any] = field(default_factory=dict)  # list[int] | int64 array
    times: dict[str, Any] = field(default_factory=dict)  # list[str | None] | TimeColumn
    rejected: list[Rejected] = field(default_factory=list)
    rows: int = 0
    notices: list[Notice] = field(default_factory=list)  # said once per file
    unread: int = 0  # lines not read for want of a header (said once, in a notice)

    @property
    def characteristics(self) -> list[str]:
        """Names with at least one value, in order of first appearance."""
        return list(self.values)

    @property
    def points(self) -> int:
        """Values over all characteristics."""
        return sum(len(v) for v in self.values.values())


# --------------------------------------------------------------------------- per-line path


def _float_of(text: str, decimal_comma: bool) -> float | None:
    """`text` as a float (any magnitude, inf and nan included), None when it is no number."""
    t = text.strip()
    if not t or "_" in t:
        return None
    if decimal_comma:
        t = t.replace(",", ".")
    try:
        return float(t)
    except ValueError:
        return None


def in_range(v: float) -> bool:
    """A finite value whose magnitude is at most MAX_MAGNITUDE (see there for why)."""
    return -MAX_MAGNITUDE <= v <= MAX_MAGNITUDE


def parse_number(text: str, decimal_comma: bool) -> float | None:
    """The one definition of a readable number: None when `text` is not a finite number within
    ±MAX_MAGNITUDE."""
    v = _float_of(text, decimal_comma)
    return v if v is not None and in_range(v) else None


def _shown(text: str) -> str:
    return repr(text if len(text) <= _SHOWN else text[:_SHOWN] + "…")


def _out_of_range(shown: str, where: str) -> str:
    return f"{shown} in {where} is out of range (more than {MAX_MAGNITUDE:g} in magnitude)"


def _value_problem(text: str, column: str, decimal_comma: bool) -> str:
    if not text.strip():
        return f"empty value in column '{column}'"
    v = _float_of(text, decimal_comma)
    if v is not None and math.isfinite(v):
        return _out_of_range(_shown(text.strip()), f"column '{column}'")
    return f"{_shown(text.strip())} in column '{column}' is not a number"


def _detect_delimiter(text: str) -> str:
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


def _looks_like_data(fields: list[str], decimal_comma: bool) -> bool:
    """At least half the fields are numbers or dates and times: a row, not column names."""
    data = sum(
        1 for f in fields
        if parse_number(f, decimal_comma) is not None or _DATE_TIME.fullmatch(f) is not None
    )
    return data > 0 and 2 * data >= len(fields)


def _time_index(names: list[str], configured: str | None) -> int | None:
    if configured:
        return names.index(configured) if configured in names else None
    for j, n in enumerate(names):
        if n.strip().lower() in TIME_NAMES:
            return j
    return None


class _Rows:
    """Per-characteristic lists that become a Batch."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.values: dict[str, list[float]] = {}
        self.lines: dict[str, list[int]] = {}
        self.times: dict[str, list[str | None]] = {}
        self.rejected: list[Rejected] = []
        self.rows = 0
        self.notices: list[Notice] = []
        self.unread = 0

    def add(self, name: str, value: float, line: int, time: str | None) -> None:
        vals = self.values.get(name)
        if vals is None:
            vals = self.values[name] = []
            self.lines[name] = []
            self.times[name] = []
        vals.append(value)
        self.lines[name].append(line)
        self.times[name].append(time)

    def reject(self, line: int, reason: str) -> None:
        self.rejected.append(Rejected(self.file, line, reason))

    def batch(self) -> Batch:
        return Batch(self.file, self.values, self.lines, self.times, self.rejected, self.rows,
                     self.notices, self.unread)


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
        expected: list[str] | None = None,
    ) -> None:
        self.feed = feed
        self.file = file
        self.columns = list(columns) if columns is not None else None
        self.expected = list(expected) if expected and columns is None else None
        self.require_columns = require_columns
        self.decimal_comma = feed.decimal == ","
        self.previous_header: tuple[str, ...] | None = None  # kept across `reset`
        self.reset()

    def reset(self) -> None:
        """Forget the header: the file starts again (truncated, replaced, new file)."""
        self.header: tuple[str, ...] | None = None
        self.delimiter: str = "," if self.feed.delimiter == "auto" else self.feed.delimiter
        self.time_idx: int | None = None
        self.time_key: str | None = None
        # wide CSV / JSON: (characteristic, field index or key); None until decided
        self.wanted: list[tuple[str, int]] | None = None
        self.wanted_keys: list[str] | None = None
        self.name_idx = -1
        self.value_idx = -1
        self.usable = True
        self.headerless = False  # began with data and no header to go by (said once)
        self.names_seen: dict[str, None] = {}  # long rows and JSON keys, in order of appearance

    @property
    def ready(self) -> bool:
        """True once later rows no longer change what the parser extracts."""
        if self.feed.layout == "jsonl":
            return self.wanted_keys is not None or self.columns is not None
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
        out = _Rows(self.file)
        for k, raw in enumerate(lines):
            self.feed_line(raw, first_line_no + k, out)
        return out.batch()

    def parse_block(self, data: bytes, first_line_no: int) -> Batch:
        """Parse complete lines given as one buffer, each ending in a newline.

        A large block of a wide or long feed goes through the whole-buffer path (same result, far
        faster); the batch holds plain lists either way.
        """
        if len(data) >= FAST_BLOCK_BYTES:
            if self.feed.layout == "wide":
                return _as_lists(_read_wide(data, self, first_line_no - 1))
            if self.feed.layout == "long":
                return _as_lists(_read_long(data, self, first_line_no - 1))
        lines = data.split(b"\n")
        if lines and lines[-1] == b"":
            lines.pop()
        return self.parse(lines, first_line_no)

    # one line ------------------------------------------------------------------------------

    def feed_line(self, raw: bytes, line_no: int, out: _Rows) -> None:
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
            self._json_line(stripped, line_no, out)
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

    def _header_line(self, text: str, line_no: int, out: _Rows) -> bool:
        """Take a file's first line as its header. True when it is a data row instead, read
        under the header this path had before (a writer that starts a rotated file without
        one); a first line of data with no header to go by is rejected."""
        if self.feed.delimiter == "auto":
            self.delimiter = _detect_delimiter(text)
        self.decimal_comma = self.feed.decimal == "," or self.delimiter == ";"
        names = [f.strip() for f in self._split(text)]
        if _looks_like_data(names, self.decimal_comma):
            before = self.previous_header
            if before is not None and len(before) == len(names):
                self._use_header(list(before), line_no, out)
                return True
            problem = "first line holds numbers and times, not a header of column names"
            if self.require_columns:
                raise LinewatchError(f"{self.file}: line {line_no}: {problem}")
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

    def _use_header(self, names: list[str], line_no: int, out: _Rows) -> None:
        twice = [n for n in dict.fromkeys(names) if n and names.count(n) > 1]
        for name in twice:  # said once per file: the header is read once per file
            where = ", ".join(str(j + 1) for j, n in enumerate(names) if n == name)
            out.notices.append(Notice(self.file, line_no, (
                f"column '{name}' appears {names.count(name)} times in the header (fields "
                f"{where}); only the first is read")))
        self.header = tuple(names)
        self.previous_header = self.header
        self.time_idx = _time_index(names, self.feed.time_column)
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
            missing = [c for c in self.columns if c not in names]
            if missing:
                problems.append("no column " + ", ".join(f"'{c}'" for c in missing))
            self.wanted = [(c, names.index(c)) for c in self.columns if c in names]
            if not self.wanted:
                self.usable = False
        elif self.expected is not None:
            problems += _lacking(self.expected, names)
        if problems:
            message = f"{'; '.join(problems)} (columns: {', '.join(names)})"
            if self.require_columns:
                raise LinewatchError(f"{self.file}: {message}")
            if not self.usable:
                message += "; nothing is read from this file"
            out.notices.append(Notice(self.file, line_no, message))  # no row is lost

    def _decide_columns(self, fields: list[str]) -> bool:
        assert self.header is not None
        seen: set[str] = set()
        wanted: list[tuple[str, int]] = []
        for j, name in enumerate(self.header):
            if j == self.time_idx or name in seen:
                continue
            seen.add(name)
            v = _float_of(fields[j], self.decimal_comma)
            if v is not None and math.isfinite(v):  # out of range still makes a numeric column
                wanted.append((name, j))
        if wanted:
            self.wanted = wanted
        return bool(wanted)

    def _time_of(self, fields: list[str]) -> str | None:
        if self.time_idx is None:
            return None
        return fields[self.time_idx].strip() or None

    def _wide_row(self, fields: list[str], line_no: int, out: _Rows) -> None:
        if not self.usable:
            return
        if self.wanted is None and not self._decide_columns(fields):
            out.reject(line_no, "no number in any column")
            return
        assert self.wanted is not None
        got: list[float] = []
        for name, j in self.wanted:
            v = parse_number(fields[j], self.decimal_comma)
            if v is None:
                out.reject(line_no, _value_problem(fields[j], name, self.decimal_comma))
                return
            got.append(v)
        if not got:
            return
        time = self._time_of(fields)
        for (name, _), v in zip(self.wanted, got, strict=True):
            out.add(name, v, line_no, time)
        out.rows += 1

    def _long_row(self, fields: list[str], line_no: int, out: _Rows) -> None:
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
            out.reject(line_no, _value_problem(fields[self.value_idx], self.feed.value_column,
                                                self.decimal_comma))
            return
        out.add(name, v, line_no, self._time_of(fields))
        out.rows += 1

    def _json_number(self, v: Any) -> float | None:
        if isinstance(v, bool):
            return None
        if isinstance(v, int | float):
            try:
                f = float(v)
            except OverflowError:
                return None
            return f if in_range(f) else None
        if isinstance(v, str):
            return parse_number(v, self.decimal_comma)
        return None

    def _json_line(self, text: str, line_no: int, out: _Rows) -> None:
        try:
            obj = json.loads(text)
        except (ValueError, RecursionError) as exc:  # ValueError: also numbers too long
            out.reject(line_no, f"not valid JSON: {getattr(exc, 'msg', exc)}")
            return
        if not isinstance(obj, dict):
            out.reject(line_no, "not a JSON object")
            return
        if self.time_key is None:
            self.time_key = self.feed.time_column or next(
                (k for k in obj if k.strip().lower() in TIME_NAMES), None
            )
        t = obj.get(self.time_key) if self.time_key is not None else None
        time = None if t is None else (str(t).strip() or None)
        nc = self.feed.name_column
        if nc in obj:
            name = str(obj[nc]).strip() if obj[nc] is not None else ""
            if not name:
                out.reject(line_no, f"empty name in key '{nc}'")
                return
            self.names_seen[name] = None
            if self.columns is not None and name not in self.columns:
                return
            raw = obj.get(self.feed.value_column)
            v = self._json_number(raw)
            if v is None:
                out.reject(line_no, _json_problem(raw, self.feed.value_column, self.decimal_comma))
                return
            out.add(name, v, line_no, time)
            out.rows += 1
            return
        self.names_seen.update((k, None) for k in obj if k != self.time_key)
        keys = self.columns if self.columns is not None else self.wanted_keys
        if keys is None:
            keys = [
                k for k, v in obj.items()
                if k != self.time_key and not isinstance(v, bool) and isinstance(v, int | float)
                and _finite_json(v)
            ]
            if not keys:
                out.reject(line_no, "no number in any key")
                return
            self.wanted_keys = keys
            if self.expected is not None and (lacking := _lacking(self.expected, list(obj), "key")):
                out.notices.append(Notice(self.file, line_no, (
                    f"{lacking[0]} (keys: {', '.join(obj)})")))
        got: list[float] = []
        for k in keys:
            v = self._json_number(obj.get(k))
            if v is None:
                out.reject(line_no, _json_problem(obj.get(k, _MISSING), k, self.decimal_comma))
                return
            got.append(v)
        for k, v in zip(keys, got, strict=True):
            out.add(k, v, line_no, time)
        if got:
            out.rows += 1


_MISSING = object()


def _lacking(expected: list[str], names: list[str], word: str = "column") -> list[str]:
    """The problem of a file that lacks columns asked for ("no column 'x'"), saying when
    nothing asked for is there at all; empty when it has them all."""
    missing = [c for c in expected if c not in names]
    if not missing:
        return []
    problem = f"no {word} " + ", ".join(f"'{c}'" for c in missing)
    if len(missing) == len(expected):
        problem += ", so nothing is charted from this file"
    return [problem]


def _finite_json(v: int | float) -> bool:
    """A JSON number that is finite as a float (out of range still makes a numeric key)."""
    try:
        return math.isfinite(float(v))
    except OverflowError:
        return False


def _json_problem(raw: Any, key: str, decimal_comma: bool = False) -> str:
    if raw is _MISSING:
        return f"no key '{key}'"
    if raw is None or raw == "":
        return f"empty value in key '{key}'"
    shown = _shown(json.dumps(raw) if not isinstance(raw, str) else raw)
    if isinstance(raw, str):
        big = _float_of(raw, decimal_comma)
    elif isinstance(raw, int | float) and not isinstance(raw, bool):
        try:
            big = float(raw)
        except OverflowError:
            big = None
    else:
        big = None
    if big is not None and math.isfinite(big):
        return _out_of_range(shown, f"key '{key}'")
    return f"{shown} in key '{key}' is not a number"


# --------------------------------------------------------------------------- whole file, fast


def read_bytes(source: str) -> tuple[str, bytes]:
    """The name to report and the content of `source` ('-' is standard input)."""
    if source == "-":
        return "<stdin>", sys.stdin.buffer.read()
    p = Path(source)
    try:
        mode = p.stat().st_mode
        if not stat.S_ISREG(mode) and not stat.S_ISDIR(mode):
            # a FIFO would block until a writer comes, a device may never end
            from linewatch.feeds.tailer import _kind_of

            raise LinewatchError(
                f"{source}: is {_kind_of(mode)}, not a regular file; to read it anyway, "
                f"give it on standard input: linewatch check - < {source}")
        return source, p.read_bytes()
    except FileNotFoundError:
        raise LinewatchError(f"{source}: no such file") from None
    except IsADirectoryError:
        raise LinewatchError(f"{source}: is a directory, not a log file") from None
    except OSError as exc:
        raise LinewatchError(f"{source}: cannot read ({exc.strerror or exc})") from None


def read_log(source: str, feed: FeedConfig, columns: list[str] | None = None) -> Batch:
    """Read a whole log (path or '-') into one Batch, fast; same result as RowParser.

    A last line without a newline is a row here (a finished file); unknown columns and a
    missing header raise LinewatchError naming what there is.
    """
    name, data = read_bytes(source)
    return parse_log_bytes(data, name, feed, columns)


def parse_log_bytes(
    data: bytes, file: str, feed: FeedConfig, columns: list[str] | None = None
) -> Batch:
    """`read_log` on bytes already in memory."""
    parser = RowParser(feed, file, columns, require_columns=True)
    if feed.layout == "wide":
        batch = _read_wide(data, parser)
    elif feed.layout == "long":
        batch = _read_long(data, parser)
    else:
        lines = data.split(b"\n")
        if lines and lines[-1] == b"":
            lines.pop()
        batch = _as_arrays(parser.parse(lines, 1))
    if feed.layout != "jsonl" and parser.header is None:
        raise LinewatchError(f"{file}: no header line")
    if columns is not None and feed.layout != "wide":
        missing = [c for c in columns if c not in batch.values]
        if missing:
            what = "characteristic" if feed.layout == "long" else "key"
            found = ", ".join(parser.names_seen) or "none"
            raise LinewatchError(
                f"{file}: no {what} {', '.join(repr(c) for c in missing)} (found: {found})"
            )
    return batch


def _line_by_line(data: bytes, lo: int, line_no: int, parser: RowParser, out: _Rows,
                  until_ready: bool = False) -> tuple[int, int]:
    """Feed the lines of `data` from byte `lo` to the per-line parser (only until it is ready,
    with `until_ready`); returns where it stopped and the last line number."""
    while lo < len(data) and not (until_ready and parser.ready):
        end = data.index(b"\n", lo)
        line_no += 1
        parser.feed_line(data[lo:end], line_no, out)
        lo = end + 1
    return lo, line_no


def _read_whole(data: bytes, parser: RowParser, lines_before: int,
                fast_ok: Callable[[RowParser], bool],
                fast: type[_FastWide] | type[_FastLong]) -> Batch:
    """The header (and whatever the parser needs before it is ready) line by line, then the
    rest through `fast` when the encoding is ASCII-compatible and `fast_ok` says the columns
    allow it, else line by line."""
    if data and not data.endswith(b"\n"):
        data += b"\n"
    prefix = _Rows(parser.file)
    lo, line_no = _line_by_line(data, 0, lines_before, parser, prefix, until_ready=True)
    plain = codecs.lookup(parser.feed.encoding).name in _ASCII_COMPATIBLE
    if lo >= len(data) or not parser.usable or not plain or not fast_ok(parser):
        _line_by_line(data, lo, line_no, parser, prefix)
        return _as_arrays(prefix.batch())
    return fast(data, lo, line_no, parser).run(prefix)


def _wide_fast_ok(p: RowParser) -> bool:
    # a header repeat must never look like a row of numbers to the fast path
    return bool(p.wanted) and not any(
        parse_number(name, p.decimal_comma) is not None for name, _ in p.wanted or [])


def _long_fast_ok(p: RowParser) -> bool:
    # a header repeat must never look like a row with a number to the fast path
    return p.header is not None and parse_number(p.header[p.value_idx], p.decimal_comma) is None


def _read_wide(data: bytes, parser: RowParser, lines_before: int = 0) -> Batch:
    """A wide CSV: plain rows as whole arrays, the rest line by line (same result)."""
    return _read_whole(data, parser, lines_before, _wide_fast_ok, _FastWide)


def _read_long(data: bytes, parser: RowParser, lines_before: int = 0) -> Batch:
    """A long-layout CSV (a name column and a value column), read like a wide one."""
    return _read_whole(data, parser, lines_before, _long_fast_ok, _FastLong)


_NAME_BYTES = 64  # longer names take the per-line path


class _WholeBuffer:
    """A buffer of complete lines from byte `lo` on, numbered after `lines_before`."""

    def __init__(self, data: bytes, lo: int, lines_before: int, parser: RowParser) -> None:
        self.data = data
        self.arr = np.frombuffer(data, dtype=np.uint8)
        self.lo = lo
        self.lines_before = lines_before
        self.parser = parser


class _FastLong(_WholeBuffer):
    """Whole-buffer conversion of the plain rows of a long-layout CSV.

    A row takes the fast path when it is printable ASCII without quotes, does not start with a
    blank or '#', has the header's number of fields, a name without surrounding blanks and a
    plain decimal value; every other row goes through `RowParser.feed_line`, so both agree.
    """

    def _names(self, s: np.ndarray, e: np.ndarray, ok: np.ndarray) -> np.ndarray:
        """Each row's name as fixed-width bytes (rows not `ok` get b'')."""
        lens = np.where(ok, e - s, 0)
        width = max(1, int(lens.max(initial=0)))
        mat = np.zeros((len(s), width), dtype=np.uint8)
        for j in range(width):
            col = np.take(self.arr, s + j, mode="clip")
            col[lens <= j] = 0
            mat[:, j] = col
        return mat.view(f"S{width}").ravel()

    def run(self, prefix: _Rows) -> Batch:
        p = self.parser
        starts, nl, ends, base, pos, self.slow = _line_table(self.arr, self.lo, p)
        fast = np.flatnonzero(~self.slow)
        fs, fe, fb = starts[fast], ends[fast], base[fast]
        assert p.header is not None
        ncols = len(p.header)
        ns, ne = _field_span(p.name_idx, ncols, fs, fe, fb, pos)
        vs, ve = _field_span(p.value_idx, ncols, fs, fe, fb, pos)
        if p.time_idx is not None:
            ts, te = _field_span(p.time_idx, ncols, fs, fe, fb, pos)
        else:
            ts = te = np.zeros(len(fast), dtype=np.int64)
        del pos
        arr = self.arr
        nlen = ne - ns
        ok = (nlen > 0) & (nlen <= _NAME_BYTES)
        ok &= ~np.isin(np.take(arr, ns, mode="clip"), (32, 9))
        ok &= ~np.isin(np.take(arr, np.maximum(ne - 1, 0), mode="clip"), (32, 9))
        vals, good = _convert(arr, vs, ve, p.decimal_comma)
        ok &= good
        self.slow[fast[~ok]] = True
        keep = np.flatnonzero(ok)
        fast, vals = fast[keep], vals[keep]
        ns, ne, ts, te = ns[keep], ne[keep], ts[keep], te[keep]
        first_no = self.lines_before + 1
        fast_lines = fast + first_no
        names = self._names(ns, ne, np.ones(len(fast), dtype=bool))
        # the unusual rows, line by line through the same code as RowParser; note where each
        # name was first seen so names_seen keeps the order of the file
        rest = _Rows(p.file)
        known = list(p.names_seen)  # met before this buffer: they keep their place
        seen_at: dict[str, int] = {}
        data = self.data
        for i in np.flatnonzero(self.slow).tolist():
            before = len(p.names_seen)
            p.feed_line(data[starts[i] : nl[i]], i + first_no, rest)
            if len(p.names_seen) != before:
                seen_at[next(reversed(p.names_seen))] = i + first_no
        uniq, first_idx, inverse = np.unique(names, return_index=True, return_inverse=True)
        decoded = [u.decode("ascii") for u in uniq.tolist()]
        old = set(known)
        for k, name in enumerate(decoded):
            if name not in old:
                line = int(fast_lines[first_idx[k]])
                seen_at[name] = min(line, seen_at.get(name, line))
        order = sorted(seen_at, key=seen_at.__getitem__)
        p.names_seen = {**dict.fromkeys(known), **dict.fromkeys(order)}
        return self._merge(prefix, rest, decoded, inverse, fast_lines, vals, ts, te)

    def _merge(self, prefix: _Rows, rest: _Rows, decoded: list[str], inverse: np.ndarray,
               fast_lines: np.ndarray, vals: np.ndarray, ts: np.ndarray,
               te: np.ndarray) -> Batch:
        """Per name: prefix rows, then fast rows with the line-by-line rows put back in order."""
        p = self.parser
        wanted = None if p.columns is None else set(p.columns)
        batch = Batch(file=p.file, rejected=prefix.rejected + rest.rejected,
                      notices=prefix.notices + rest.notices, unread=prefix.unread + rest.unread)
        batch.rows = prefix.rows + rest.rows
        groups = np.argsort(inverse, kind="stable")
        bounds = np.searchsorted(inverse[groups], np.arange(len(decoded) + 1))
        fast_rows: dict[str, np.ndarray] = {}
        for k, name in enumerate(decoded):
            if wanted is None or name in wanted:
                fast_rows[name] = groups[bounds[k] : bounds[k + 1]]
                batch.rows += len(fast_rows[name])
        names = set(fast_rows) | set(rest.values) | set(prefix.values)
        first_line: dict[str, int] = {}
        for name in names:
            cands = [int(fast_lines[fast_rows[name][0]])] if name in fast_rows else []
            cands += rest.lines.get(name, [])[:1] + prefix.lines.get(name, [])[:1]
            first_line[name] = min(cands)
        for name in sorted(names, key=first_line.__getitem__):
            rows = fast_rows.get(name, np.zeros(0, dtype=np.int64))
            f_lines = fast_lines[rows]
            slow_l = np.asarray(rest.lines.get(name, []), dtype=np.int64)
            at = np.searchsorted(f_lines, slow_l)
            lines = np.insert(f_lines, at, slow_l)
            v = np.insert(vals[rows], at, np.asarray(rest.values.get(name, []), dtype=np.float64))
            s, e = np.insert(ts[rows], at, 0), np.insert(te[rows], at, 0)
            extra: dict[int, str | None] = {}
            pre_l, pre_t = prefix.lines.get(name, []), prefix.times.get(name, [])
            npre = len(pre_l)
            for j, t in enumerate(pre_t):
                extra[j] = t
            for k, (at_k, t) in enumerate(zip(at.tolist(), rest.times.get(name, []), strict=True)):
                extra[npre + at_k + k] = t
            if npre:
                lines = np.concatenate([np.asarray(pre_l, dtype=np.int64), lines])
                v = np.concatenate([np.asarray(prefix.values[name], dtype=np.float64), v])
                pad = np.zeros(npre, dtype=np.int64)
                s, e = np.concatenate([pad, s]), np.concatenate([pad, e])
            batch.values[name] = v
            batch.lines[name] = lines
            batch.times[name] = TimeColumn(buf=self.data, starts=s, ends=e, extra=extra)
        batch.rejected.sort(key=lambda r: r.line)
        return batch


def _as_arrays(batch: Batch) -> Batch:
    """The list-based batch of the per-line path in read_log's numpy form."""
    batch.values = {k: np.asarray(v, dtype=np.float64) for k, v in batch.values.items()}
    batch.lines = {k: np.asarray(v, dtype=np.int64) for k, v in batch.lines.items()}
    batch.times = {k: TimeColumn(v) for k, v in batch.times.items()}
    return batch


def _as_lists(batch: Batch) -> Batch:
    """A numpy batch as plain lists (what a live tail hands on); shared times decoded once."""
    decoded: dict[int, list[str | None]] = {}
    times: dict[str, Any] = {}
    for k, t in batch.times.items():
        if id(t) not in decoded:
            decoded[id(t)] = list(t)
        times[k] = decoded[id(t)]
    batch.values = {k: np.asarray(v).tolist() for k, v in batch.values.items()}
    batch.lines = {k: np.asarray(v).tolist() for k, v in batch.lines.items()}
    batch.times = times
    return batch


_ASCII_COMPATIBLE = frozenset(
    {"utf-8", "ascii", "latin-1", "iso8859-1", "cp1252", "iso8859-15", "cp1250", "cp1251",
     "utf-8-sig"}
)
_NUM_LUT = np.zeros(256, dtype=bool)
_NUM_LUT[list(b"0123456789.+-")] = True
_NUM_LUT[0] = True
_FAST_FIELD = 24
_POW10 = 10.0 ** np.arange(23)


class _FastWide(_WholeBuffer):
    """Whole-buffer conversion of the plain rows of a wide CSV; the rest go line by line.

    A row takes the fast path when it is printable ASCII without quotes, does not start with a
    blank or '#', has exactly the header's number of fields and its wanted values are plain
    decimals; every other row goes through `RowParser.feed_line`, so both paths agree.
    """

    def run(self, prefix: _Rows) -> Batch:
        p = self.parser
        assert p.header is not None and p.wanted is not None
        ncols = len(p.header)
        arr = self.arr
        starts, nl, ends, base, pos, slow = _line_table(arr, self.lo, p)
        fast = np.flatnonzero(~slow)
        fbase = base[fast]
        del base
        fstarts, fends = starts[fast], ends[fast]
        spans = [_field_span(j, ncols, fstarts, fends, fbase, pos)
                 for j in [j for _, j in p.wanted]
                 + ([p.time_idx] if p.time_idx is not None else [])]
        if p.time_idx is not None:
            ts, te = spans.pop()
        else:
            ts = te = np.zeros(len(fast), dtype=np.int64)
        del fstarts, fends
        del pos, fbase, ends
        ok = np.ones(len(fast), dtype=bool)
        converted: list[np.ndarray] = []
        for k in range(len(spans)):
            s, e = spans[k]
            spans[k] = (ts[:0], ts[:0])  # let each span go once converted
            vals, good = _convert(arr, s, e, p.decimal_comma)
            del s, e
            ok &= good
            converted.append(vals)
        if not ok.all():
            slow[fast[~ok]] = True
            fast = fast[ok]
            ts, te = ts[ok], te[ok]
            converted = [c[ok] for c in converted]
        first_no = self.lines_before + 1
        fast_lines = fast + first_no
        # the unusual rows, line by line through the same code as RowParser
        rest = _Rows(p.file)
        data = self.data
        for i in np.flatnonzero(slow).tolist():
            p.feed_line(data[starts[i] : nl[i]], i + first_no, rest)
        return _merge(prefix, rest, p, fast_lines, converted, data, ts, te)


def _line_table(
    arr: np.ndarray, lo: int, p: RowParser
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """The lines of `arr` from `lo`: (starts, newline positions, ends without a CR, index in
    `pos` of each line's first delimiter, `pos` = the newlines and delimiters in order, and a
    mask of the lines that need the per-line path: a field count other than the header's,
    empty, starting with '#' or a blank, too long, or holding a byte the fast path leaves
    alone)."""
    assert p.header is not None
    ncols = len(p.header)
    pos, odd_pos = _scan(arr, lo, ord(p.delimiter))
    nlk = np.flatnonzero(arr[pos] == 10)
    nl = pos[nlk]
    n = len(nl)
    starts = np.empty(n, dtype=pos.dtype)
    starts[0] = lo
    starts[1:] = nl[:-1] + 1
    base = np.empty(n, dtype=pos.dtype)  # index in pos of each line's first delimiter
    base[0] = 0
    base[1:] = nlk[:-1] + 1
    slow = (nlk - base) != ncols - 1
    del nlk
    ends = nl.copy()
    cr_end = (ends > starts) & (arr[np.maximum(ends - 1, 0)] == 13)
    ends -= cr_end
    del cr_end
    first = arr[np.minimum(starts, len(arr) - 1)]
    slow |= (ends == starts) | (first == 35) | (first == 32) | (first == 9)
    slow |= (ends - starts) > MAX_LINE_BYTES
    if len(odd_pos):
        slow[np.searchsorted(starts, odd_pos, side="right") - 1] = True
    return starts, nl, ends, base, pos, slow


def _field_span(j: int, ncols: int, starts: np.ndarray, ends: np.ndarray, base: np.ndarray,
                pos: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Byte spans of field `j` of the lines given by starts, ends and `base` (see
    `_line_table`)."""
    last = len(pos) - 1
    s = starts if j == 0 else pos[np.minimum(base + j - 1, last)] + 1
    e = ends if j == ncols - 1 else pos[np.minimum(base + j, last)]
    return s, e


_SCAN_BLOCK = 1 << 22


def _scan(arr: np.ndarray, lo: int, delim: int) -> tuple[np.ndarray, np.ndarray]:
    """Positions of newlines and delimiters from `lo` on, and of bytes that need the per-line
    path (controls, non-ASCII, quotes; a \r just before a newline is fine). Works block by
    block so no temporary is as large as the file."""
    pos_parts: list[np.ndarray] = []
    odd_parts: list[np.ndarray] = []
    last = len(arr) - 1
    kind = np.int32 if len(arr) < 2**31 - 1 else np.int64  # halves the memory of big logs
    for b0 in range(lo, len(arr), _SCAN_BLOCK):
        blk = arr[b0 : b0 + _SCAN_BLOCK]
        sep = blk == 10
        sep |= blk == delim
        pos_parts.append((np.flatnonzero(sep) + b0).astype(kind))
        odd = (blk - np.uint8(32)) > 94
        odd |= blk == 34
        odd &= ~sep
        if odd.any():
            op = np.flatnonzero(odd) + b0
            op = op[~((arr[op] == 13) & (arr[np.minimum(op + 1, last)] == 10))]
            odd_parts.append(op)
    empty = np.zeros(0, dtype=kind)
    pos = np.concatenate(pos_parts) if pos_parts else empty
    return pos, (np.concatenate(odd_parts) if odd_parts else empty)


def _convert(
    arr: np.ndarray, s: np.ndarray, e: np.ndarray, decimal_comma: bool
) -> tuple[np.ndarray, np.ndarray]:
    """Plain decimal numbers between byte spans -> (float64 values, convertible mask).

    Values are exact: an integer mantissa of at most 15 digits divided by a power of ten is
    correctly rounded, as Python's float() is. Anything else (exponents, long numbers, text) is
    left to the per-line path by a False in the mask. Works column by column (Horner's scheme)
    so memory stays a few arrays of the row count.
    """
    n = len(s)
    lens = e - s
    width = int(min(lens.max(initial=0), _FAST_FIELD))
    good = (lens > 0) & (lens <= width)
    mant = np.zeros(n, dtype=np.int64)
    frac = np.zeros(n, dtype=np.int8)
    ndig = np.zeros(n, dtype=np.int8)
    seen_dot = np.zeros(n, dtype=bool)
    neg = np.zeros(n, dtype=bool)
    for j in range(width):
        c = np.take(arr, s + j, mode="clip")
        c[lens <= j] = 0
        if decimal_comma:
            c[c == 44] = 46
        good &= _NUM_LUT[c]
        d = c - np.uint8(48)
        isd = d < 10
        if j == 0:
            neg = c == 45
        else:
            good &= (c != 45) & (c != 43)
        dot = c == 46
        good &= ~(dot & seen_dot)
        seen_dot |= dot
        np.multiply(mant, 10, out=mant, where=isd)
        np.add(mant, d, out=mant, where=isd, casting="unsafe")
        frac += isd & seen_dot
        ndig += isd
    good &= (ndig >= 1) & (ndig <= 15)  # so |value| < 1e15, always within MAX_MAGNITUDE
    vals = mant.astype(np.float64)
    vals /= _POW10[frac]
    np.negative(vals, out=vals, where=neg)
    return vals, good


def _merge(
    prefix: _Rows,
    rest: _Rows,
    p: RowParser,
    fast_lines: np.ndarray,
    converted: list[np.ndarray],
    data: bytes,
    ts: np.ndarray,
    te: np.ndarray,
) -> Batch:
    """Prefix rows, then fast rows with the line-by-line rows put back in file order.

    In the wide layout a row gives every wanted column or none, so all characteristics share
    one set of lines and one TimeColumn.
    """
    assert p.wanted is not None
    batch = Batch(file=p.file, rejected=prefix.rejected + rest.rejected,
                  notices=prefix.notices + rest.notices, unread=prefix.unread + rest.unread)
    batch.rows = prefix.rows + rest.rows + len(fast_lines)
    key = p.wanted[0][0]
    pre_l = prefix.lines.get(key, [])
    pre_t = prefix.times.get(key, [])
    slow_l = np.asarray(rest.lines.get(key, []), dtype=np.int64)
    slow_t = rest.times.get(key, [])
    npre = len(pre_l)
    at = np.searchsorted(fast_lines, slow_l)
    lines = np.insert(fast_lines, at, slow_l)
    s, e = np.insert(ts, at, 0), np.insert(te, at, 0)
    extra: dict[int, str | None] = dict(enumerate(pre_t))
    for k, (pos, t) in enumerate(zip(at.tolist(), slow_t, strict=True)):
        extra[npre + pos + k] = t
    if npre:
        lines = np.concatenate([np.asarray(pre_l, dtype=np.int64), lines])
        pad = np.zeros(npre, dtype=np.int64)
        s, e = np.concatenate([pad, s]), np.concatenate([pad, e])
    if len(lines) == 0:
        return batch
    times = TimeColumn(buf=data, starts=s, ends=e, extra=extra)
    for (name, _), vals in zip(p.wanted, converted, strict=True):
        v = np.insert(vals, at, np.asarray(rest.values.get(name, []), dtype=np.float64))
        if npre:
            v = np.concatenate([np.asarray(prefix.values.get(name, []), dtype=np.float64), v])
        batch.values[name] = v
        batch.lines[name] = lines
        batch.times[name] = times
    batch.rejected.sort(key=lambda r: r.line)
    return batch
