"""Whole-file reading for `check`: a path or standard input -> one `Batch`, with clear errors
for what is no log (a missing file, a folder, a FIFO that would block, a missing header or
column)."""

from __future__ import annotations

import stat
import sys
from pathlib import Path

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import LinewatchError
from linewatch.feeds.batch import Batch
from linewatch.feeds.identity import kind_of
from linewatch.feeds.row_parser import RowParser
from linewatch.feeds.whole_buffer import read_buffer


def read_bytes(source: str) -> tuple[str, bytes]:
    """The name to report and the content of `source` ('-' is standard input)."""
    if source == "-":
        return "<stdin>", sys.stdin.buffer.read()
    p = Path(source)
    try:
        mode = p.stat().st_mode
        if not stat.S_ISREG(mode) and not stat.S_ISDIR(mode):
            # a FIFO would block until a writer comes, a device may never end
            raise LinewatchError(
                f"{source}: is {kind_of(mode)}, not a regular file; to read it anyway, "
                f"give it on standard input: linewatch check - < {source}")
        return source, p.read_bytes()
    except FileNotFoundError:
        raise LinewatchError(f"{source}: no such file") from None
    except IsADirectoryError:
        raise LinewatchError(f"{source}: is a directory, not a log file") from None
    except OSError as exc:
        raise LinewatchError(f"{source}: cannot read ({exc.strerror or exc})") from None


def read_log(source: str, feed: FeedConfig, columns: list[str] | None = None, *,
             times: bool = True) -> Batch:
    """Read a whole log (path or '-') into one Batch, fast; same result as RowParser.

    A last line without a newline is a row here (a finished file); unknown columns and a
    missing header raise LinewatchError naming what there is. `times=False` leaves the time
    text unread (every time None) for a caller that needs none.
    """
    name, data = read_bytes(source)
    return parse_log_bytes(data, name, feed, columns, times=times)


def parse_log_bytes(
    data: bytes, file: str, feed: FeedConfig, columns: list[str] | None = None, *,
    times: bool = True,
) -> Batch:
    """`read_log` on bytes already in memory."""
    parser = RowParser(feed, file, columns, require_columns=True, keep_times=times)
    if feed.layout == "jsonl":
        lines = data.split(b"\n")
        if lines and lines[-1] == b"":
            lines.pop()
        batch = parser.parse(lines, 1)
    else:
        batch = read_buffer(data, parser)
        if parser.header is None:
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
