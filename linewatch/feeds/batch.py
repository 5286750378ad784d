"""The columnar `Batch` every reading path hands on, and the builder the per-line path fills.

Whichever path read the rows (line by line, or the whole-buffer path), a Batch holds numpy
arrays: float64 values and int64 line numbers per characteristic, and a `TimeColumn` of time
text. Consumers therefore need one way of handling them, and a million rows never become a
million Python objects.
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from typing import overload

import numpy as np

from linewatch.domain.records import Notice, Rejected


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

    `values[c]` (float64), `lines[c]` (int64, 1-based) and `times[c]` (text or None) run in file
    order. Use `len(v) == 0` rather than truth tests on the arrays. `rows` counts data rows that
    gave at least one value.
    """

    file: str
    values: dict[str, np.ndarray] = field(default_factory=dict)
    lines: dict[str, np.ndarray] = field(default_factory=dict)
    times: dict[str, TimeColumn] = field(default_factory=dict)
    rejected: list[Rejected] = field(default_factory=list)
    rows: int = 0
    notices: list[Notice] = field(default_factory=list)  # said once per file
    unread: int = 0  # lines not read for want of a header (said once, in a notice)
    # the text columns a parser was asked to keep (sample ids, pass/fail results), one entry
    # per kept row, with each row's line and time (empty unless asked for)
    texts: dict[str, list[str]] = field(default_factory=dict)
    text_lines: list[int] = field(default_factory=list)
    text_times: list[str | None] = field(default_factory=list)

    @property
    def characteristics(self) -> list[str]:
        """Names with at least one value, in order of first appearance."""
        return list(self.values)

    @property
    def points(self) -> int:
        """Values over all characteristics."""
        return sum(len(v) for v in self.values.values())


class BatchBuilder:
    """Per-characteristic lists, filled row by row, that become a Batch."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.values: dict[str, list[float]] = {}
        self.lines: dict[str, list[int]] = {}
        self.times: dict[str, list[str | None]] = {}
        self.rejected: list[Rejected] = []
        self.rows = 0
        self.notices: list[Notice] = []
        self.unread = 0
        self.texts: dict[str, list[str]] = {}
        self.text_lines: list[int] = []
        self.text_times: list[str | None] = []

    def add(self, name: str, value: float, line: int, time: str | None) -> None:
        vals = self.values.get(name)
        if vals is None:
            vals = self.values[name] = []
            self.lines[name] = []
            self.times[name] = []
        vals.append(value)
        self.lines[name].append(line)
        self.times[name].append(time)

    def add_texts(self, texts: list[tuple[str, str]], line: int, time: str | None) -> None:
        """The kept text columns of one row."""
        for name, text in texts:
            self.texts.setdefault(name, []).append(text)
        self.text_lines.append(line)
        self.text_times.append(time)

    def reject(self, line: int, reason: str) -> None:
        self.rejected.append(Rejected(self.file, line, reason))

    def batch(self) -> Batch:
        """The rows so far as a Batch of arrays."""
        return Batch(
            self.file,
            {k: np.asarray(v, dtype=np.float64) for k, v in self.values.items()},
            {k: np.asarray(v, dtype=np.int64) for k, v in self.lines.items()},
            {k: TimeColumn(v) for k, v in self.times.items()},
            self.rejected, self.rows, self.notices, self.unread,
            self.texts, self.text_lines, self.text_times,
        )
