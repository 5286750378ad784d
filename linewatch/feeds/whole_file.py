"""Whole-file reading for `check`: a path or standard input -> one `Batch`, with clear errors
for what is no log (a missing file, a folder, a FIFO that would block, a missing header or
column)."""

from __future__ import annotations

import stat
import sys
from pathlib import Path

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import FeedError
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
            raise FeedError(
                f"{source}: is {kind_of(mode)}, not a regular file; to read it anyway, "
                f"give it on standard input: linewatch check - < {source}")
        return source, p.read_bytes()
    except FileNotFoundError:
        raise FeedError(f"{source}: no such file") from None
    except IsADirectoryError:
        raise FeedError(f"{source}: is a directory, not a log file") from None
    except OSError as exc:
        raise FeedError(f"{source}: cannot read ({exc.strerror or exc})") from None


def read_log(source: str, feed: FeedConfig, columns: list[str] | None = None, *,
             times: bool = True) -> Batch:
    """Read a whole log (path or '-') into one Batch, fast; same result as RowParser.

    A last line without a newline is a row here (a finished file); unknown columns and a
    missing header raise FeedError naming what there is. `times=False` leaves the time
    text unread (every time None) for a caller that needs none.
    """
    name, data = read_bytes(source)
    return parse_log_bytes(data, name, feed, columns, times=times)


def read_logs(sources: list[str], feeds: list[FeedConfig], columns: list[str] | None = None,
              *, times: bool = True) -> list[Batch]:
    """`read_log` of several logs, each with its feed. Long rows name their characteristic one
    by one, so one log may hold only some of `columns`: a name that no log holds is one error
    once all are read, listing the characteristics they hold (a wide header lacking a column
    is an error of its own file, as in `read_log`)."""
    read = []
    for source, feed in zip(sources, feeds, strict=True):
        name, data = read_bytes(source)
        read.append(_parse(data, name, feed, columns, times))
    _check_names(read, columns)
    return [batch for batch, _, _ in read]


def parse_log_bytes(
    data: bytes, file: str, feed: FeedConfig, columns: list[str] | None = None, *,
    times: bool = True,
) -> Batch:
    """`read_log` on bytes already in memory."""
    read = _parse(data, file, feed, columns, times)
    _check_names([read], columns)
    return read[0]


def _parse(data: bytes, file: str, feed: FeedConfig, columns: list[str] | None,
           times: bool) -> tuple[Batch, RowParser, FeedConfig]:
    parser = RowParser(feed, file, columns, require_columns=True, keep_times=times)
    if feed.layout == "jsonl":
        lines = data.split(b"\n")
        if lines and lines[-1] == b"":
            lines.pop()
        batch = parser.parse(lines, 1)
    else:
        batch = read_buffer(data, parser)
        if parser.header is None:
            raise FeedError(f"{file}: no header line")
    return batch, parser, feed


def _check_names(read: list[tuple[Batch, RowParser, FeedConfig]],
                 columns: list[str] | None) -> None:
    """The names of `columns` that no log's rows name (long rows, JSON keys) raise FeedError
    naming the logs and what they hold. Wide headers were checked as they were read."""
    named = [(b, p, f) for b, p, f in read if f.layout != "wide"]
    if columns is None or not named:
        return
    missing = [c for c in columns if not any(c in b.values for b, _, _ in read)]
    if missing:
        what = "characteristic" if any(f.layout == "long" for _, _, f in named) else "key"
        found = ", ".join(dict.fromkeys(n for _, p, _ in named for n in p.names_seen)) or "none"
        files = ", ".join(b.file for b, _, _ in named)
        names = ", ".join(f"'{c}'" for c in missing)
        raise FeedError(f"{files}: no {what} {names} ({what}s: {found})")
