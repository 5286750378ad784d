"""JSON lines: one object per line, read into the same rows as CSV.

An object holding the feed's name key (``name_column``) is a long row (name and
``value_column``); any other object is a wide row whose numeric fields are characteristics.
Numbers may be JSON numbers or numeric strings. Without explicit keys, the characteristics are
the keys holding a finite number in the first object that has one (the time key aside). The
time key is ``time_column`` or else the first key named like a time.
"""

from __future__ import annotations

import json
import math
from typing import Any

from linewatch.config.model import FeedConfig
from linewatch.domain.records import Notice
from linewatch.feeds.batch import BatchBuilder
from linewatch.feeds.values import (
    float_of,
    in_range,
    is_time_name,
    lacking,
    out_of_range,
    parse_number,
)
from linewatch.feeds.values import shown as shown_text

_MISSING = object()


class JsonRows:
    """Turns JSON-lines text into rows, remembering the time key and the chosen keys.

    `columns` lists the wanted keys (wide objects) or names (long objects); None takes every
    numeric key. `names_seen` (shared with the caller) collects names and keys in order of
    appearance, for messages naming what a file holds.
    """

    def __init__(self, feed: FeedConfig, columns: list[str] | None,
                 names_seen: dict[str, None], keep_times: bool = True,
                 expected: list[str] | None = None) -> None:
        self.feed = feed
        self.expected = expected  # keys asked for while every key is read (see RowParser)
        self.keep_times = keep_times
        self.columns = columns
        self.names_seen = names_seen
        self.decimal_comma = feed.decimal == ","
        self.time_key: str | None = None
        self.wanted_keys: list[str] | None = None
        # asked-for keys the file's first object lacked: said once, then skipped (not a
        # rejection on every row) until an object carries them
        self.absent: set[str] | None = None
        self.long_rows = False  # an object named its characteristic (the name key)

    @property
    def ready(self) -> bool:
        """True once later objects no longer change which keys are read."""
        return self.wanted_keys is not None or self.columns is not None

    def line(self, text: str, line_no: int, out: BatchBuilder) -> None:
        """Read one stripped, non-blank line into `out` (values, or a rejection)."""
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
                (k for k in obj if is_time_name(k)), None
            )
        t = obj.get(self.time_key) if self.time_key is not None else None
        time = None if t is None or not self.keep_times else (str(t).strip() or None)
        nc = self.feed.name_column
        if nc in obj:
            self._long(obj, nc, line_no, time, out)
        else:
            self._wide(obj, line_no, time, out)

    def _long(self, obj: dict[str, Any], nc: str, line_no: int, time: str | None,
              out: BatchBuilder) -> None:
        name = str(obj[nc]).strip() if obj[nc] is not None else ""
        if not name:
            out.reject(line_no, f"empty name in key '{nc}'")
            return
        self.names_seen[name] = None
        self.long_rows = True
        if self.columns is not None and name not in self.columns:
            return
        raw = obj.get(self.feed.value_column)
        v = self._number(raw)
        if v is None:
            out.reject(line_no, _problem(raw, self.feed.value_column, self.decimal_comma))
            return
        out.add(name, v, line_no, time)
        out.rows += 1

    def _wide(self, obj: dict[str, Any], line_no: int, time: str | None,
              out: BatchBuilder) -> None:
        self.names_seen.update((k, None) for k in obj if k != self.time_key)
        keys = self.columns if self.columns is not None else self.wanted_keys
        if keys is None:
            keys = [
                k for k, v in obj.items()
                if k != self.time_key and not isinstance(v, bool) and isinstance(v, int | float)
                and _finite(v)
            ]
            if not keys:
                out.reject(line_no, "no number in any key")
                return
            self.wanted_keys = keys
            if self.expected is not None and (missing := lacking(self.expected, list(obj),
                                                                 "key")):
                out.notices.append(Notice(out.file, line_no, (
                    f"{missing[0]} (keys: {', '.join(obj)})")))
        if self.columns is not None and self.absent is None:
            self.absent = {k for k in self.columns if k not in obj}
            if self.absent:
                shown = ", ".join(f"'{k}'" for k in self.columns if k in self.absent)
                rest = "; nothing is read from this file" if len(self.absent) == len(
                    self.columns) else ""
                out.notices.append(Notice(out.file, line_no, (
                    f"no key {shown} (keys: {', '.join(obj)}){rest}")))
        if self.absent:
            self.absent -= obj.keys()
            keys = [k for k in keys if k not in self.absent]
            if not keys:
                return
        got: list[float] = []
        for k in keys:
            v = self._number(obj.get(k))
            if v is None:
                out.reject(line_no, _problem(obj.get(k, _MISSING), k, self.decimal_comma))
                return
            got.append(v)
        for k, v in zip(keys, got, strict=True):
            out.add(k, v, line_no, time)
        if got:
            out.rows += 1

    def _number(self, v: Any) -> float | None:
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


def _finite(v: int | float) -> bool:
    """A JSON number that is finite as a float (out of range still makes a numeric key)."""
    try:
        return math.isfinite(float(v))
    except OverflowError:
        return False


def _problem(raw: Any, key: str, decimal_comma: bool = False) -> str:
    """Why the value of `key` is no readable number."""
    if raw is _MISSING:
        return f"no key '{key}'"
    if raw is None or raw == "":
        return f"empty value in key '{key}'"
    quoted = shown_text(json.dumps(raw) if not isinstance(raw, str) else raw)
    big: float | None
    if isinstance(raw, str):
        big = float_of(raw, decimal_comma)
    elif isinstance(raw, int | float) and not isinstance(raw, bool):
        try:
            big = float(raw)
        except OverflowError:
            big = None
    else:
        big = None
    if big is not None and math.isfinite(big):
        return out_of_range(quoted, f"key '{key}'")
    return f"{quoted} in key '{key}' is not a number"
