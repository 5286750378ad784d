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
from typing import TYPE_CHECKING
from urllib.parse import quote, unquote

from linewatch.domain.errors import LinewatchError

if TYPE_CHECKING:
    from linewatch.config.loading import MonitorConfig
    from linewatch.store.db import Store

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


def configure_audit(store: Store, monitor: MonitorConfig, source: str = "config") -> (
    Anchorer | None
):
    """Apply the config's audit settings to an open store: the key (when `audit_key_file` is
    set) signs new entries; the returned Anchorer (when `audit_anchor_file` is set) writes
    anchors. Both files must lie outside the state directory (ConfigError otherwise)."""
    from linewatch.domain.errors import ConfigError
    from linewatch.store.audit import load_key

    for key, path in (("audit_key_file", monitor.audit_key_file),
                      ("audit_anchor_file", monitor.audit_anchor_file)):
        if path and not outside(store.directory, path):
            raise ConfigError(
                source or "config", f"monitor.{key}",
                f"{path} is inside the state directory {store.directory}; keep it elsewhere, "
                "or it is lost or rewritten along with the store",
            )
    if monitor.audit_key_file:
        store.audit.use_key(load_key(monitor.audit_key_file))
    if monitor.audit_anchor_file:
        return Anchorer(store, monitor.audit_anchor_file, monitor.audit_anchor_every)
    return None


class Anchorer:
    """Writes the trail's head to the anchor file: on request (a report, a stop) and whenever
    `every` entries have been added since the last anchor it wrote."""

    def __init__(self, store: Store, path: str, every: int) -> None:
        self.store = store
        self.path = path
        self.every = every
        self._last: int | None = None

    def write(self, why: str, head: tuple[int, str] | None = None) -> str | None:
        """Append an anchor of `head` (default: the trail's head now); returns a problem to
        report (the file cannot be written) or None. Never raises for the file."""
        import time

        entries, digest = head if head is not None else self.store.audit.head()
        line = anchor_line(self.store.directory, entries, digest, time.time(), why)
        try:
            append_anchor(self.path, line)
        except OSError as exc:
            return f"cannot write the audit anchor to {self.path}: {exc.strerror or exc}"
        self._last = entries
        return None

    def maybe(self) -> str | None:
        """Write an anchor if `every` entries were added since the last one (0: never)."""
        if not self.every:
            return None
        head = self.store.audit.head()
        if head[0] - (self._last or 0) < self.every:
            return None
        return self.write("every", head)
