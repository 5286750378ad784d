"""Columns read beside the characteristics: a phase column (lot, die, shift) and a setting
(a speed, a set point), as text per line number, so each reading finds the lot and the setting
of its own row. The line conventions are the row parser's (blank and `#` lines skipped, a byte
order mark dropped, the header repeated by a restarted writer skipped); a row whose field count
differs from the header has no side values."""

from __future__ import annotations

import csv
import json

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import FeedError
from linewatch.feeds.row_parser import BOM, detect_delimiter
from linewatch.feeds.values import parse_number


def _split(text: str, delimiter: str) -> list[str]:
    if '"' not in text:
        return text.split(delimiter)
    return next(csv.reader([text], delimiter=delimiter), [])


def read_side_columns(data: bytes, file: str, feed: FeedConfig, names: list[str]
                      ) -> tuple[dict[str, dict[int, str]], bool]:
    """For each of `names`: line number -> the (trimmed) text of that column on that line;
    and whether numbers in the log use a decimal comma (as the row parser decides). A name
    the log lacks raises FeedError listing the columns there are."""
    out: dict[str, dict[int, str]] = {n: {} for n in names}
    if not names:
        return out, feed.decimal == ","
    header: list[str] | None = None
    index: dict[str, int] = {}
    delimiter: str = "," if feed.delimiter == "auto" else feed.delimiter
    keys_seen: dict[str, None] = {}
    for k, raw in enumerate(data.split(b"\n"), start=1):
        raw = raw.rstrip(b"\r")
        if raw.startswith(BOM):
            raw = raw[3:]
        try:
            text = raw.decode(feed.encoding)
        except UnicodeDecodeError:
            continue  # the row parser rejects and reports it
        stripped = text.strip()
        if not stripped or stripped.startswith("#"):
            continue
        if feed.layout == "jsonl":
            try:
                obj = json.loads(stripped)
            except ValueError:
                continue
            if not isinstance(obj, dict):
                continue
            keys_seen.update(dict.fromkeys(str(key) for key in obj))
            for n in names:
                v = obj.get(n)
                if v is not None and not isinstance(v, dict | list):
                    out[n][k] = str(v).strip()
            continue
        if header is None:
            if feed.delimiter == "auto":
                delimiter = detect_delimiter(text)
            header = [f.strip() for f in _split(text, delimiter)]
            missing = [n for n in names if n not in header]
            if missing:
                raise FeedError(f"{file}: no column {', '.join(repr(m) for m in missing)} "
                                f"(columns: {', '.join(header)})")
            index = {n: header.index(n) for n in names}
            continue
        fields = _split(text, delimiter)
        if len(fields) != len(header) or [f.strip() for f in fields] == header:
            continue
        for n, j in index.items():
            out[n][k] = fields[j].strip()
    if feed.layout == "jsonl":
        missing = [n for n in names if not out[n]]
        if missing:
            raise FeedError(f"{file}: no key {', '.join(repr(m) for m in missing)} "
                            f"(keys: {', '.join(keys_seen) or 'none'})")
    return out, feed.decimal == "," or delimiter == ";"


def as_numbers(texts: list[str | None], decimal_comma: bool) -> list[float]:
    """Side texts as readings (NaN where missing or no readable number)."""
    nan = float("nan")
    out = []
    for t in texts:
        v = parse_number(t, decimal_comma) if t is not None else None
        out.append(nan if v is None else v)
    return out
