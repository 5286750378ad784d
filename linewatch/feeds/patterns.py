"""Bounded expansion of the file patterns a feed follows.

`glob.glob` on a pattern like ``/**/*.csv`` or ``/proc/**`` walks the whole machine: it spins a
core, grows memory and, in the main thread, keeps a SIGTERM waiting until it is done. This
expander matches what `glob` matches for the patterns feeds use (``*``, ``?``, ``[...]``, ``**``
for any depth; names starting with ``.`` only by a pattern part that starts with ``.``), but:

- visits at most `MAX_VISITED` directory entries and returns at most `MAX_MATCHES` paths per
  pattern and expansion;
- never enters the pseudo file systems (`PSEUDO_ROOTS`: /proc, /sys, /dev), whose entries are
  no log files and whose trees are endless (/proc/self/root loops back to /) — a path named
  exactly, without a wildcard, is taken wherever it is;
- does not follow symbolic links to folders while expanding ``**`` (a link loop cannot trap it);
- stops as soon as `should_stop()` says so (SIGTERM during expansion).

`Expansion.bounded` says in words what was left out, for a feed event.
"""

from __future__ import annotations

import contextlib
import fnmatch
import glob
import os
import re
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field

MAX_VISITED = 200_000  # directory entries looked at per pattern and expansion
MAX_MATCHES = 10_000  # paths returned per pattern and expansion
PSEUDO_ROOTS = ("/proc", "/sys", "/dev")
_CHECK_EVERY = 256  # entries between two looks at should_stop


def in_pseudo_fs(path: str) -> str | None:
    """The pseudo file system root `path` lies in (or is), else None."""
    for root in PSEUDO_ROOTS:
        if path == root or path.startswith(root + os.sep):
            return root
    return None


@dataclass(slots=True)
class Expansion:
    """The paths a pattern matched, in sorted order, and what the bounds left out."""

    paths: list[str] = field(default_factory=list)
    visited: int = 0
    pseudo: set[str] = field(default_factory=set)  # pseudo file system roots not entered
    truncated: str | None = None  # "files" or "entries" when a limit was reached
    stopped: bool = False  # should_stop() said so before the end
    max_matches: int = MAX_MATCHES  # the bounds this expansion ran under
    max_visited: int = MAX_VISITED

    @property
    def bounded(self) -> str | None:
        """What was left out, in words; None when the expansion was complete."""
        said: list[str] = []
        if self.truncated == "files":
            said.append(f"stopped at {self.max_matches:,} matching files")
        elif self.truncated == "entries":
            said.append(f"stopped after looking at {self.max_visited:,} folder entries")
        if self.pseudo:
            said.append(f"pseudo file systems not read: {', '.join(sorted(self.pseudo))}")
        if self.stopped:
            said.append("stopped on request")
        return "; ".join(said) or None


class _Limit(Exception):
    pass


def _matcher(part: str) -> Callable[[str], bool]:
    rx = re.compile(fnmatch.translate(part))
    hidden_ok = part.startswith(".")
    return lambda name: (hidden_ok or not name.startswith(".")) and rx.match(name) is not None


def expand(pattern: str, should_stop: Callable[[], bool] | None = None,
           max_matches: int = MAX_MATCHES, max_visited: int = MAX_VISITED) -> Expansion:
    """The existing paths `pattern` matches (files, folders and anything else; absolute,
    sorted), within the bounds above."""
    out = Expansion(max_matches=max_matches, max_visited=max_visited)
    full = os.path.abspath(os.path.expanduser(pattern))
    if not glob.has_magic(full):  # one path named exactly: read wherever it is
        if os.path.lexists(full):
            out.paths.append(full)
        return out
    parts = full.split(os.sep)[1:]
    stop = should_stop or (lambda: False)
    found: list[str] = []

    def entries(folder: str) -> Iterator[os.DirEntry[str]]:
        root = in_pseudo_fs(folder)
        if root is not None:
            out.pseudo.add(root)
            return
        try:
            with os.scandir(folder) as it:
                for entry in it:
                    out.visited += 1
                    if out.visited % _CHECK_EVERY == 1 and stop():
                        out.stopped = True
                        raise _Limit
                    if out.visited > max_visited:
                        out.truncated = "entries"
                        raise _Limit
                    if in_pseudo_fs(entry.path) is not None:
                        out.pseudo.add(in_pseudo_fs(entry.path) or "")
                        continue
                    yield entry
        except OSError:
            return

    def add(path: str) -> None:
        found.append(path)
        if len(found) >= max_matches:
            out.truncated = "files"
            raise _Limit

    def walk(folder: str, k: int) -> None:
        if k == len(parts):
            add(folder)
            return
        part = parts[k]
        last = k == len(parts) - 1
        if part == "**":
            star(folder, k)
            return
        if not glob.has_magic(part):
            path = os.path.join(folder, part)
            if last:
                if os.path.lexists(path):
                    if in_pseudo_fs(path) is not None:
                        out.pseudo.add(in_pseudo_fs(path) or "")
                    else:
                        add(path)
            elif os.path.isdir(path):
                walk(path, k + 1)
            return
        match = _matcher(part)
        for entry in sorted(entries(folder), key=lambda e: e.name):
            if not match(entry.name):
                continue
            if last:
                add(entry.path)
            elif entry.is_dir():
                walk(entry.path, k + 1)

    def star(folder: str, k: int) -> None:
        """`folder` is one of the folders the `**` at parts[k] stands for (itself included:
        zero folders); symbolic links to folders are not followed, hidden names are left out,
        as glob does."""
        last = k == len(parts) - 1
        if not last:
            walk(folder, k + 1)
        for entry in sorted(entries(folder), key=lambda e: e.name):
            if entry.name.startswith("."):
                continue
            if last:
                add(entry.path)
            if entry.is_dir(follow_symlinks=False):
                star(entry.path, k)

    with contextlib.suppress(_Limit):  # a bound was reached: keep what was found
        walk(os.sep, 0)
    out.paths = sorted(dict.fromkeys(found))
    return out
