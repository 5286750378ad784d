"""Audit anchors: the trail's head (entry count and newest hash) written OUTSIDE the store, so
that a trail truncated, emptied or rewritten (and re-hashed) after the anchor was made no longer
matches it.

An anchor is one line of text, the same in an anchor file, a shift report (Markdown, HTML, CSV)
or a printout:

    linewatch-audit-anchor v1 entries=42 head=<64 hex> at=2026-03-02T14:00:00+01:00 why=report
    store=/var/lib/linewatch/line3

`parse_anchors` finds such lines anywhere in a text, so any report can be given to
`audit verify --anchor`. The store's path is percent-encoded (it may hold spaces) and comes
last.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from urllib.parse import quote, unquote

from linewatch.errors import LinewatchError

MARK = "linewatch-audit-anchor v1"
_LINE = re.compile(
    r"linewatch-audit-anchor v1 entries=(?P<entries>\d+) head=(?P<head>[0-9a-f]{64}) "
    r"at=(?P<at>\S+) why=(?P<why>[a-z-]+) store=(?P<store>[^\s<>`\"',|]+)"
)


@dataclass(frozen=True, slots=True)
class Anchor:
    """The head of one store's trail at one moment, as recorded outside it."""

    entries: int
    head: str
    at: str  # ISO time with offset, as written
    why: str  # report, stop, every
    store: str  # the state directory's resolved path
    source: str = ""  # the file it was read from


def store_key(directory: str | Path) -> str:
    """How an anchor names a state directory: its resolved path."""
    return str(Path(directory).expanduser().resolve())


def anchor_line(directory: str | Path, entries: int, head: str, at: float, why: str) -> str:
    """One anchor as text (no line end)."""
    stamp = datetime.fromtimestamp(at).astimezone().isoformat(timespec="seconds")
    return (f"{MARK} entries={entries} head={head} at={stamp} why={why} "
            f"store={quote(store_key(directory), safe='/:')}")


def parse_anchors(text: str, source: str = "") -> list[Anchor]:
    """Every anchor found in `text`, in order."""
    return [
        Anchor(int(m["entries"]), m["head"], m["at"], m["why"], unquote(m["store"]), source)
        for m in _LINE.finditer(text)
    ]


def read_anchor_file(path: str | Path) -> list[Anchor]:
    """The anchors in a file (an anchor file or a report); a user error if it cannot be read."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8", errors="replace")
    except OSError as exc:
        raise LinewatchError(f"--anchor {p}: cannot read: {exc.strerror or exc}") from None
    return parse_anchors(text, str(p))


def append_anchor(path: str | Path, line: str) -> None:
    """Append one anchor line and flush it to disk. The file is opened for appending only (an
    administrator can make it append-only for everyone, e.g. `chattr +a`)."""
    fd = os.open(path, os.O_WRONLY | os.O_APPEND | os.O_CREAT, 0o640)
    try:
        os.write(fd, (line + "\n").encode("utf-8"))
        os.fsync(fd)
    finally:
        os.close(fd)


def outside(directory: str | Path, path: str | Path) -> bool:
    """True when `path` is not inside the state directory (an anchor or key kept in the
    store's own folder is lost or rewritten along with it)."""
    d = Path(directory).expanduser().resolve()
    p = Path(path).expanduser().resolve()
    return d != p and d not in p.parents
