"""The rows a characteristic with stepped limits takes from one parsed batch: its sample id,
its value (a measured value, a count, or 1 for a failed part and 0 for a good one), the units
the row stands for, its time in seconds and its tag (file, line, time text).

A pass/fail result that is neither a fail value nor a pass value is a rejected row with the
reason, like a bad number (counted and reported with file and line, never guessed).
"""

from __future__ import annotations

from collections.abc import Hashable
from datetime import datetime

from linewatch.config.model import CharacteristicConfig
from linewatch.domain.records import Rejected
from linewatch.domain.safe_text import visible
from linewatch.feeds.batch import Batch

Row = tuple[Hashable, float | None, float, float | None, object]


def is_stepped(c: CharacteristicConfig) -> bool:
    """Charted with stepped limits: subgroups that follow the data, or attribute data."""
    return c.sizes_vary or c.is_attribute


def columns_read(c: CharacteristicConfig) -> tuple[list[str], list[str]]:
    """(numeric columns, text columns) a characteristic reads from a wide log."""
    texts = [c.subgroup_by] if c.subgroup_by else []
    if c.result_column:
        return [], [c.result_column, *texts]
    if c.count_column:
        return [c.count_column, *([c.size_column] if c.size_column else [])], texts
    return [c.column], texts


def seconds_of(text: str | None) -> float | None:
    """A row's time stamp in epoch seconds (local time when it names no zone); None when it
    has none or it cannot be read (the feed counts those)."""
    if not text:
        return None
    try:
        stamp = datetime.fromisoformat(text.strip())
    except ValueError:
        return None
    if stamp.tzinfo is None:
        stamp = stamp.astimezone()
    return stamp.timestamp()


def stepped_rows(c: CharacteristicConfig, batch: Batch) -> tuple[list[Row], list[Rejected]]:
    """The rows of `batch` for `c`, in file order, and the rows refused (results that are
    neither pass nor fail)."""
    labels: dict[int, str] = {}
    if c.subgroup_by and c.subgroup_by in batch.texts:
        labels = dict(zip(batch.text_lines, batch.texts[c.subgroup_by], strict=True))
    rows: list[Row] = []
    rejected: list[Rejected] = []
    if c.result_column:
        results = batch.texts.get(c.result_column, [])
        fails = {v.strip().casefold() for v in c.fail_values}
        passes = {v.strip().casefold() for v in c.pass_values}
        for line, text, when in zip(batch.text_lines, results, batch.text_times, strict=False):
            key = text.casefold()
            if key not in fails and key not in passes:
                rejected.append(Rejected(batch.file, line, (
                    f"'{visible(text)}' in column '{visible(c.result_column)}' is neither a "
                    "fail nor a pass value")))
                continue
            rows.append((labels.get(line), 1.0 if key in fails else 0.0, 1.0, seconds_of(when),
                         [batch.file, line, when]))
        return rows, rejected
    column = c.count_column or c.column
    if column not in batch.values:
        return rows, rejected
    values = batch.values[column].tolist()
    lines = batch.lines[column].tolist()
    times = list(batch.times[column]) if column in batch.times else [None] * len(values)
    sizes: dict[int, float] = {}
    if c.size_column and c.size_column in batch.values:
        sizes = dict(zip(batch.lines[c.size_column].tolist(),
                         batch.values[c.size_column].tolist(), strict=True))
    for v, line, when in zip(values, lines, times, strict=True):
        size = sizes.get(line, 1.0) if c.size_column else 1.0
        if c.size_column and line not in sizes:
            continue  # (a wide row lacking its size was rejected whole)
        rows.append((labels.get(line), float(v), size, seconds_of(when), [batch.file, line, when]))
    return rows, rejected
