"""Live subgroups: rows arrive in any chunking and leave as closed subgroups.

The incremental twin of the batch functions in `subgroups.py`, in three modes:
- by count (`size`): data rows k·size … (k + 1)·size − 1 form subgroup k; a row that could not
  be read (value None) still takes its place, so it leaves its own subgroup one value short
  instead of shifting every later one (batch: `sizes_from_labels(positions // size)`);
- by label (`size` None): a change of label (a sample id) closes the subgroup; in a live tail a
  subgroup whose last row is more than `timeout` seconds old is closed by `expire(now)`, since
  the next sample may never come (batch: `split_on_gaps`);
- by clock window: labels from `subgroups.window_labels`, and `window` set so that
  `expire(now)` closes a window's subgroup once the clock has left that window.
A subgroup the clock closed stays closed: a late row with its label starts a new one. The
batch twins give the same subgroups for any chunking and any `expire` calls as long as the
clock handed to `expire` is the rows' own (rows arrive by their time stamps).
"""

from __future__ import annotations

from collections.abc import Hashable, Iterable
from dataclasses import dataclass, field
from math import floor


@dataclass(slots=True)
class ClosedSubgroup:
    """The values of one closed subgroup and what the caller attached to each value's row."""

    label: Hashable
    values: list[float]
    meta: list[object]
    by_clock: bool = False


@dataclass(slots=True)
class SubgroupCollector:
    """Collects rows (label, value or None, time stamp or None, meta) into subgroups."""

    size: int | None = None
    timeout: float | None = None
    window: float | None = None
    offset: float = 0.0
    _label: Hashable = None
    _open: bool = False
    _values: list[float] = field(default_factory=list)
    _meta: list[object] = field(default_factory=list)
    _last_time: float | None = None
    _rows: int = 0

    @property
    def open_count(self) -> int:
        """Values in the subgroup still open."""
        return len(self._values)

    def _close(self, by_clock: bool = False) -> ClosedSubgroup | None:
        out = ClosedSubgroup(self._label, self._values, self._meta, by_clock) if self._values \
            else None
        self._values, self._meta, self._open = [], [], False
        return out

    def push(self, rows: Iterable[tuple[Hashable, float | None, float | None, object]]
             ) -> list[ClosedSubgroup]:
        """Add rows in order; the subgroups they closed (never an empty one)."""
        closed: list[ClosedSubgroup] = []
        for label, value, when, meta in rows:
            if self.size is not None:
                label = self._rows // self.size
                self._rows += 1
            if self._open and (label != self._label or self._gap(when)):
                done = self._close(by_clock=label == self._label)
                if done is not None:
                    closed.append(done)
            if not self._open:
                self._label, self._open = label, True
            if value is not None:
                self._values.append(value)
                self._meta.append(meta)
            self._last_time = when
            if self.size is not None and self._rows % self.size == 0:
                done = self._close()
                if done is not None:
                    closed.append(done)
        return closed

    def _gap(self, when: float | None) -> bool:
        """More than `timeout` seconds between the last row and this one (label mode): the
        same cut `expire` makes when the clock passes it first, so chunking does not matter."""
        return (self.size is None and self.window is None and self.timeout is not None
                and when is not None and self._last_time is not None
                and when - self._last_time > self.timeout)

    def expire(self, now: float) -> ClosedSubgroup | None:
        """Close the open subgroup when the clock says no more rows belong to it: its window
        has passed, or its last row is more than `timeout` seconds old (label mode)."""
        if not self._open or self.size is not None:
            return None
        if self.window is not None:
            if isinstance(self._label, (int, float)) and \
                    floor((now + self.offset) / self.window) > self._label:
                return self._close(by_clock=True)
            return None
        if self.timeout is not None and self._last_time is not None and \
                now - self._last_time > self.timeout:
            return self._close(by_clock=True)
        return None

    def flush(self) -> ClosedSubgroup | None:
        """Close whatever is open (the end of a batch)."""
        return self._close()
