"""Follow log files by byte offset through appends, partial lines, rotation and truncation.

Each followed path keeps an open handle, the byte offset just after the last complete line it
handed out, and the number of the next line. Only complete lines (ending in a newline) are
parsed; a partial last line waits for its newline (and is never a point if it never gets one).
Files are identified by device,
inode and a fingerprint of their first bytes, so a replaced, rotated or truncated file is
recognised whatever its name; what happened is decided in `identity.py` from the facts this
module gathers (deleted: `vanished`; created again: `appeared`; not readable: `unreadable` /
`readable`; a pattern whose folder or file does not exist yet: `waiting`).

At most `max_open` files are held open. When more match (a folder of archived daily logs), the
files that have been quiet longest are put to rest: their handle is closed, their state kept,
and they are opened again (resuming at the same offset) when a stat shows them changed. A
file that is renamed or deleted while resting is handled like a rotation found on restart.

The caller commits each chunk's `FileState` with whatever it derived from the chunk and passes
the saved states back on restart, so reading resumes exactly where it stopped.
"""

from __future__ import annotations

import errno
import glob
import os
import stat
import time
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field

from linewatch.config.model import FeedConfig
from linewatch.domain.records import FeedEvent, FileState
from linewatch.feeds.asked_names import AskedNames
from linewatch.feeds.batch import Batch
from linewatch.feeds.identity import (
    FINGERPRINT_BYTES,
    Seen,
    copy_goes_on,
    fingerprint,
    first_bytes_needed,
    in_place,
    kind_of,
    moved,
    on_reopen,
    resting_change,
)
from linewatch.feeds.patterns import Expansion, expand
from linewatch.feeds.row_parser import MAX_LINE_BYTES, RowParser
from linewatch.feeds.whole_buffer import FAST_BLOCK_BYTES, parse_block

READ_SIZE = 1 << 20
DEFAULT_MAX_BYTES = 4 << 20  # read from one file in one poll at most
POLL_BYTES = 16 << 20  # read from all files in one poll at most (memory stays bounded)
PRIME_BYTES = 64 << 10
SHRINK_GRACE = 2.0  # seconds a shorter file that begins like ours may take to grow back
MAX_OPEN = 200  # handles held at once at most ...


def default_max_open() -> int:
    """... and no more than a quarter of this process's limit on open files, leaving room for
    the store, the watcher and the screen."""
    try:
        import resource

        soft, _ = resource.getrlimit(resource.RLIMIT_NOFILE)
    except (ImportError, OSError, ValueError):  # no such limit on this platform
        return MAX_OPEN
    if soft == resource.RLIM_INFINITY or soft <= 0:
        return MAX_OPEN
    return max(4, min(MAX_OPEN, soft // 4))


@dataclass(slots=True)
class TailChunk:
    """What one poll found for one path: events first, then the rows, then the new state."""

    path: str
    batch: Batch | None
    state: FileState | None
    events: list[FeedEvent] = field(default_factory=list)
    more: bool = False  # bytes are still waiting beyond this poll's budget
    # when the rows were written, for rows that were already in the file when it was opened
    # (catching up on a history); None for rows that arrived while following (written now)
    written_at: float | None = None


def _static_dir(pattern: str) -> str:
    """The deepest folder of `pattern` that has no wildcard in it."""
    parts = os.path.abspath(pattern).split(os.sep)
    keep: list[str] = []
    for part in parts[:-1]:
        if glob.has_magic(part):
            break
        keep.append(part)
    return os.sep.join(keep) or os.sep


BOUNDED_EVERY = 30.0  # seconds between two walks of a pattern whose expansion was bounded


def _not_a_log(path: str) -> str | None:
    """What `path` is when it is no regular file (a FIFO is never opened: reading one blocks),
    else None."""
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        return None if not os.path.islink(path) else "a broken symbolic link"
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            return "a symbolic link loop"
        return None  # unreadable: the reading step says so
    if stat.S_ISREG(mode):
        return None
    return kind_of(mode)


def _find_inode(folder: str, dev: int, inode: int) -> str | None:
    """The name a file with this identity has now in `folder`, if any."""
    try:
        with os.scandir(folder) as it:
            for entry in it:
                try:
                    st = entry.stat(follow_symlinks=False)
                except OSError:
                    continue
                if st.st_ino == inode and st.st_dev == dev:
                    return entry.path
    except OSError:
        return None
    return None


def _first_bytes(path: str, n: int) -> bytes | None:
    """The first `n` bytes of the file a name points at now (None when it cannot be read)."""
    try:
        fd = os.open(path, os.O_RDONLY)
    except OSError:
        return None
    try:
        return os.pread(fd, n, 0)
    except OSError:
        return None
    finally:
        os.close(fd)


class _Followed:
    """One path: its open handle, position, partial line and parser."""

    def __init__(self, path: str, feed: FeedConfig, columns: list[str] | None,
                 expected: list[str] | None = None,
                 fast_from: int = FAST_BLOCK_BYTES, text_columns: list[str] | None = None
                 ) -> None:
        self.path = path
        self.parser = RowParser(feed, path, columns, expected=expected,
                                text_columns=text_columns)
        self.fast_from = fast_from  # blocks this large take the whole-buffer path
        self.fd: int | None = None
        self.dev = self.inode = 0
        self.head = b""  # first bytes of the open file (fingerprint)
        self.offset = 0  # after the last complete line handed out
        self.pos = 0  # next byte to read
        self.next_line = 1
        self.pending = bytearray()  # start of the current incomplete line (at most cap + 1)
        self.overflow = False  # the current line is longer than the cap: skipping to its end
        self.unreadable = False
        self.gone = False
        self.resume_from: FileState | None = None  # where to go on after an I/O error
        self.shrunk_since: float | None = None  # when the file was first seen shorter
        # (device, inode, size, mtime) when put to rest with its handle closed; None otherwise
        self.rest: tuple[int, int, int, int] | None = None
        self.backlog_end = 0  # bytes the file held when it was opened ...
        self.backlog_mtime = 0.0  # ... and when it was last written then

    # -- identity ---------------------------------------------------------------------------

    def state(self) -> FileState:
        return FileState(
            self.path, self.dev, self.inode, fingerprint(self.head), self.offset, self.next_line,
            self.parser.header,
        )

    def _read_head(self, fd: int, size: int) -> bytes:
        return os.pread(fd, min(size, FINGERPRINT_BYTES), 0)

    def written_at(self) -> float | None:
        """When the rows read so far were written, as far as the file tells: its modification
        time at opening for rows it already held (a catch-up), None for rows appended since."""
        return self.backlog_mtime if 0 < self.offset <= self.backlog_end else None

    def _restart(self) -> None:
        self.backlog_end = 0
        self.shrunk_since = None
        self.offset = self.pos = 0
        self.next_line = 1
        self.pending.clear()
        self.overflow = False
        self.parser.reset()

    def close(self) -> None:
        if self.fd is not None:
            os.close(self.fd)
            self.fd = None

    def open(
        self, events: list[FeedEvent], adopt: FileState | None, history: bool = True
    ) -> bool:
        """Open the path; resume from `adopt` when it describes this same file. `history`:
        the bytes it holds now were written before we followed it (their rows carry its
        modification time); False when waking a resting file, whose new rows are live."""
        try:
            fd = os.open(self.path, os.O_RDONLY | getattr(os, "O_CLOEXEC", 0))
        except FileNotFoundError:
            return False
        except OSError as exc:
            if not self.unreadable:
                self.unreadable = True
                events.append(FeedEvent("unreadable", self.path, exc.strerror or str(exc)))
            return False
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            os.close(fd)
            return False
        self.fd, self.dev, self.inode = fd, st.st_dev, st.st_ino
        self.head = self._read_head(fd, st.st_size)
        self._restart()
        if history:
            self.backlog_end, self.backlog_mtime = st.st_size, st.st_mtime
        if adopt is not None:
            self._resume(adopt, st.st_size, events)
        return True

    def _resume(self, saved: FileState, size: int, events: list[FeedEvent]) -> None:
        verdict = on_reopen(saved, Seen(self.dev, self.inode, size, self.head))
        if verdict.kind is not None:
            events.append(FeedEvent(verdict.kind, self.path, verdict.detail))
        if not verdict.resume:
            return
        self.offset = self.pos = saved.offset
        self.next_line = saved.next_line
        if saved.header and self.parser.previous_header is None:
            self.parser.previous_header = tuple(saved.header)
        if saved.offset:
            head = os.pread(self.fd or 0, min(saved.offset, PRIME_BYTES), 0)
            cut = head.rfind(b"\n")
            if cut >= 0:
                self.parser.prime(head[: cut + 1].split(b"\n")[:-1])

    # -- reading ----------------------------------------------------------------------------

    def read(self, budget: int) -> tuple[Batch | None, bool]:
        """Read up to `budget` bytes from the position; parse the lines that completed."""
        assert self.fd is not None
        pieces: list[bytes] = []
        first = self.next_line
        remaining = budget
        more = False
        while True:
            if remaining <= 0:
                more = os.fstat(self.fd).st_size > self.pos
                break
            chunk = os.pread(self.fd, min(READ_SIZE, remaining), self.pos)
            if not chunk:
                break
            remaining -= len(chunk)
            self._take(chunk, pieces)
            self.pos += len(chunk)
        if not pieces:
            return None, more
        return parse_block(self.parser, b"".join(pieces), first, self.fast_from), more

    def _take(self, chunk: bytes, pieces: list[bytes]) -> None:
        """Collect the complete lines of `chunk` (each ending in a newline) into `pieces`."""
        start = 0
        if self.overflow:
            k = chunk.find(b"\n")
            if k < 0:
                return
            pieces.append(bytes(self.pending) + b"\n")  # longer than the cap: rejected
            self.pending.clear()
            self.overflow = False
            self.offset = self.pos + k + 1
            self.next_line += 1
            start = k + 1
        last = chunk.rfind(b"\n", start)
        if last >= 0:
            if self.pending:
                k = chunk.find(b"\n", start)
                pieces.append(bytes(self.pending) + chunk[start : k + 1])
                self.pending.clear()
                self.next_line += 1
                start = k + 1
            if start <= last:
                block = chunk[start : last + 1]
                pieces.append(block)
                self.next_line += block.count(b"\n")
            self.offset = self.pos + last + 1
            start = last + 1
        tail = chunk[start:]
        room = MAX_LINE_BYTES + 1 - len(self.pending)
        if len(tail) > room:
            self.pending += tail[:room]
            self.overflow = True
        else:
            self.pending += tail

    def changed_in_place(self, size: int, now: float, grace: float) -> tuple[str | None, bool]:
        """(why the open file must be read again from 0, or None; whether to wait and see),
        as `identity.in_place` judges it."""
        assert self.fd is not None
        first = (self._read_head(self.fd, size) if first_bytes_needed(size, self.pos, self.head)
                 else None)
        verdict = in_place(size, self.pos, self.head, first, self.shrunk_since, now, grace)
        self.shrunk_since, self.head = verdict.shrunk_since, verdict.head
        return verdict.why, verdict.wait


class Tailer:
    """Follow every file matched by the feeds' patterns (expanded again at each poll).

    `saved` maps paths to the states a previous run committed; `patterns` are extra patterns
    read with `default_feed` (wide CSV, detected delimiter, unless given); `shrink_grace` is
    how long a shortened file that still begins like ours may take to grow back; `expected`
    names columns to look for in each file without limiting what is read (see RowParser),
    and, where rows name their characteristic, in all files together (`AskedNames`; names in
    `found_before` are there already); `fast_block_bytes`: blocks at least this large take the
    whole-buffer path.
    """

    def __init__(
        self,
        feeds: Sequence[FeedConfig] = (),
        columns: list[str] | None = None,
        saved: Mapping[str, FileState] | None = None,
        patterns: Sequence[str] = (),
        default_feed: FeedConfig | None = None,
        shrink_grace: float = SHRINK_GRACE,
        max_open: int | None = None,
        should_stop: Callable[[], bool] | None = None,
        expected: list[str] | None = None,
        fast_block_bytes: int = FAST_BLOCK_BYTES,
        text_columns: list[str] | None = None,
        found_before: Iterable[str] = (),
    ) -> None:
        self.text_columns = list(text_columns or [])  # kept as text (wide CSV)
        self.shrink_grace = shrink_grace
        self.fast_block_bytes = fast_block_bytes
        self.should_stop = should_stop  # asked during pattern expansion (SIGTERM)
        # paths a pattern matched that are no regular file, and patterns whose expansion was
        # bounded: each said once (again only when what is said changes)
        self._skipped: dict[str, str] = {}
        self._bounded: dict[str, str] = {}
        self._last_bounded: dict[str, tuple[float, Expansion]] = {}
        self.max_open = max(1, default_max_open() if max_open is None else max_open)
        # open files, the one with the oldest news first (the first to be put to rest)
        self._open: dict[str, _Followed] = {}
        self.columns = list(columns) if columns is not None else None
        # columns asked for though every numeric column is read (several feeds): a file
        # lacking one says so once, listing its columns
        self.expected = list(expected) if expected is not None else None
        self._patterns: list[tuple[str, FeedConfig]] = [(p, f) for f in feeds for p in f.paths]
        extra_feed = default_feed or FeedConfig(paths=list(patterns))
        self._patterns += [(p, extra_feed) for p in patterns]
        # asked-for names no file holds, where rows name their characteristic (no header
        # tells): said once every file was read to its end
        named = [p for p, f in self._patterns if f.layout != "wide"]
        self.asked = (AskedNames(self.expected, ", ".join(named), found_before)
                      if self.expected and named else None)
        self._saved: dict[str, FileState] = dict(saved or {})
        self._followed: dict[str, _Followed] = {}
        self._feed_of: dict[str, FeedConfig] = {}
        self._waiting: dict[str, bool] = {}
        # (device, inode) -> (offset, next line, first bytes, header) of files rotated away
        self._retired: dict[tuple[int, int], tuple[int, int, bytes, tuple[str, ...] | None]] = {}

    @property
    def patterns(self) -> list[str]:
        """Every pattern followed (for the waker)."""
        return [p for p, _ in self._patterns]

    @property
    def files(self) -> list[str]:
        """Paths followed now (open, resting or waiting to be readable again)."""
        return [p for p, f in self._followed.items() if not f.gone]

    def status(self) -> dict[str, str]:
        """Each known path's condition: reading, resting (handle closed until it changes),
        unreadable or gone."""
        out: dict[str, str] = {}
        for path, f in self._followed.items():
            if f.unreadable:
                out[path] = "unreadable"
            elif f.fd is not None:
                out[path] = "reading"
            elif f.rest is not None:
                out[path] = "resting"
            else:
                out[path] = "gone"
        return out

    @property
    def open_files(self) -> int:
        """How many handles are held now."""
        return sum(f.fd is not None for f in self._followed.values())

    def backlog(self) -> tuple[int, int]:
        """(bytes read, bytes in total) over the open files: catch-up progress for a display."""
        done = total = 0
        for f in self._followed.values():
            if f.fd is None:
                continue
            try:
                size = os.fstat(f.fd).st_size
            except OSError:
                continue
            done += min(f.pos, size)
            total += size
        return done, total

    def close(self) -> None:
        """Close every handle (the unread partial lines are not points)."""
        for f in self._followed.values():
            f.close()
        self._open.clear()

    def poll(
        self, max_bytes: int = DEFAULT_MAX_BYTES, poll_bytes: int = POLL_BYTES
    ) -> list[TailChunk]:
        """Discover files, then read at most `max_bytes` from each, in the order the patterns
        match them (a folder of daily logs is caught up day by day), until `poll_bytes` were
        read in all; one chunk per path with news. When the files left over wait for the next
        poll, the last chunk says `more`."""
        chunks: list[TailChunk] = []
        self._discover(chunks)
        spent = 0
        for f in list(self._followed.values()):
            if spent >= poll_bytes:
                chunks.append(TailChunk("", None, None, [], more=True))
                break
            before = f.pos if f.fd is not None else None
            try:
                out = self._step(f, max_bytes)
            except OSError as exc:  # an I/O error on one file (a share went away) stops only it
                out = self._broken(f, exc)
            chunks.extend(out)
            self._note_open(f, news=bool(out))
            if out and f.fd is not None:
                spent += f.pos - (before if before is not None and before <= f.pos else 0)
        if self.asked is not None and self.asked.listening:
            events = self._asked_events(self.asked, chunks)
            if events:
                chunks.append(TailChunk(self.asked.where, None, None, events))
        return chunks

    def _asked_events(self, asked: AskedNames, chunks: list[TailChunk]) -> list[FeedEvent]:
        """What this poll's rows tell of the names asked for; once every file was read to its
        end (nothing left waiting), the ones no file holds."""
        events: list[FeedEvent] = []
        for c in chunks:
            f = self._followed.get(c.path)
            if c.batch is not None and f is not None:
                events += asked.met(c.path, [*c.batch.values, *f.parser.names_seen],
                                    f.parser.rows_named)
        if asked.missing is None and not any(c.more for c in chunks):
            for path, f in self._followed.items():  # also files resumed with no news since
                events += asked.met(path, f.parser.names_seen, f.parser.rows_named)
            events += asked.read_through()
        return events

    # -- handles ----------------------------------------------------------------------------

    def _note_open(self, f: _Followed, news: bool) -> None:
        """Keep `_open` in order of news: a file with news moves to the end."""
        if f.fd is None:
            self._open.pop(f.path, None)
        elif news or f.path not in self._open:
            self._open.pop(f.path, None)
            self._open[f.path] = f

    def _make_room(self, needing: _Followed) -> bool:
        """Below `max_open` handles, or put the quietest fully read file to rest; False when
        every open file still has bytes to read (the caller waits for its turn)."""
        if len(self._open) < self.max_open:
            return True
        for g in self._open.values():
            if g is needing or g.fd is None:
                continue
            fst = os.fstat(g.fd)
            if g.pos >= fst.st_size and g.shrunk_since is None:
                self._rest(g, fst)
                return True
        return False

    def _rest(self, f: _Followed, fst: os.stat_result) -> None:
        """Close a fully read file's handle, keeping where it stopped for when it changes."""
        self._saved[f.path] = f.state()
        f.rest = (fst.st_dev, fst.st_ino, fst.st_size, fst.st_mtime_ns)
        f.close()
        self._open.pop(f.path, None)

    def _broken(
        self, f: _Followed, exc: OSError, events: list[FeedEvent] | None = None
    ) -> list[TailChunk]:
        """Close a file that failed mid-read; it is opened again (same position) next poll.

        The failure is said once; a chunk comes back only when there is something to say, so a
        file that keeps failing never looks like work to the caller's loop.
        """
        if f.fd is not None:
            f.resume_from = f.state()
            f.close()
        events = list(events or [])
        if not f.unreadable:
            f.unreadable = True
            events.append(FeedEvent("unreadable", f.path, exc.strerror or str(exc)))
        return [TailChunk(f.path, None, None, events)] if events else []

    # -- discovery --------------------------------------------------------------------------

    def _discover(self, chunks: list[TailChunk]) -> None:
        now = time.monotonic()
        for pattern, feed in self._patterns:
            last = self._last_bounded.get(pattern)
            if last is not None and now - last[0] < BOUNDED_EVERY:
                expansion = last[1]  # a bounded walk is costly: done again now and then only
            else:
                expansion = expand(pattern, self.should_stop)
                if expansion.bounded and not expansion.stopped:
                    self._last_bounded[pattern] = (now, expansion)
                else:
                    self._last_bounded.pop(pattern, None)
            bounded = expansion.bounded
            if bounded and self._bounded.get(pattern) != bounded and not expansion.stopped:
                self._bounded[pattern] = bounded
                chunks.append(TailChunk(pattern, None, None, [FeedEvent(
                    "bounded", pattern, f"{bounded}; name the folders more narrowly")]))
            found = False
            ends_deep = pattern.rstrip(os.sep).endswith("**")
            for path in expansion.paths:
                what = _not_a_log(path)
                if what is not None:
                    # a folder matched by a trailing ** is expected; anything else is said once
                    if what != "a directory" or not ends_deep:
                        self._skip(path, what, chunks)
                    continue
                found = True
                f = self._followed.get(path)
                if f is None:
                    f = self._followed[path] = _Followed(path, feed, self.columns, self.expected,
                                                              self.fast_block_bytes,
                                                              self.text_columns)
                    self._feed_of[path] = feed
                    f.gone = True
            if found:
                self._waiting[pattern] = False
            elif pattern not in self._waiting:
                # said once, before the pattern ever matched (a rotation gap is not waiting)
                self._waiting[pattern] = True
                folder = _static_dir(pattern)
                detail = (
                    f"folder {folder} does not exist yet" if not os.path.isdir(folder)
                    else "no file matches yet"
                )
                event = FeedEvent("waiting", pattern, detail)
                chunks.append(TailChunk(pattern, None, None, [event]))

    def _skip(self, path: str, what: str, chunks: list[TailChunk]) -> None:
        """Say once that a matched path is not read, and why."""
        if self._skipped.get(path) == what:
            return
        self._skipped[path] = what
        chunks.append(TailChunk(path, None, None, [FeedEvent(
            "skipped", path, f"is {what}, not a log file: not read")]))

    # -- one path ---------------------------------------------------------------------------

    def _step(self, f: _Followed, max_bytes: int) -> list[TailChunk]:
        events: list[FeedEvent] = []
        out: list[TailChunk] = []
        st: os.stat_result | None
        try:
            st = os.stat(f.path)
            if not stat.S_ISREG(st.st_mode):
                st = None
        except FileNotFoundError:
            st = None
        except OSError:
            st = None
        if f.fd is not None:
            fst = os.fstat(f.fd)
            if st is None or (st.st_dev, st.st_ino) != (fst.st_dev, fst.st_ino):
                # the name now points elsewhere or nowhere: finish the old file first
                if fst.st_size > f.pos:
                    batch, more = f.read(max_bytes)
                    if batch is not None or more:
                        out.append(TailChunk(f.path, batch, f.state(), [], more, f.written_at()))
                    if more:
                        return out
                if st is not None and copy_goes_on(
                        fst.st_nlink, f.head, f.offset, st.st_size,
                        _first_bytes(f.path, len(f.head)) if fst.st_nlink == 0 else None):
                    return out + self._continue_in_copy(f, st, max_bytes)
                self._retire(f, fst)
                renamed = _find_inode(os.path.dirname(f.path), fst.st_dev, fst.st_ino)
                f.close()
                kind, detail = moved(st is not None, renamed)
                if st is None:
                    f.gone = True
                    out.append(TailChunk(f.path, None, None, [FeedEvent(kind, f.path, detail)]))
                    return out
                events.append(FeedEvent(kind, f.path, detail))
                if not f.open(events, self._adoptable(f.path, st)):
                    out.append(TailChunk(f.path, None, None, events))
                    return out
            else:
                why, wait = f.changed_in_place(fst.st_size, time.monotonic(), self.shrink_grace)
                if wait:
                    return out
                if why:
                    events.append(FeedEvent("truncated", f.path, why))
                    f.head = f._read_head(f.fd, fst.st_size)
                    f._restart()
        else:
            waking = f.rest is not None
            if st is None:
                return out + self._left_while_resting(f) if waking else out
            change = (None if f.rest is None else
                      resting_change(f.rest, st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns))
            if change == "unchanged":
                return out
            if not self._make_room(f):
                return [*out, TailChunk(f.path, None, None, [], more=True)]
            was_gone = f.gone
            adopt, f.resume_from = f.resume_from, None
            if f.rest is not None:
                if change == "changed":
                    adopt = self._saved.pop(f.path, None)
                else:  # replaced while resting; a followed new name reads the old file's rest
                    renamed = _find_inode(os.path.dirname(f.path), *f.rest[:2])
                    if renamed and os.path.abspath(renamed) in self._followed:
                        kind, detail = moved(True, renamed)
                        events.append(FeedEvent(kind, f.path, detail))
                f.rest = None
            if adopt is None:
                adopt = self._adoptable(f.path, st)
            if adopt is None:
                adopt = self._own_saved(f.path, st, out, max_bytes)
            if not f.open(events, adopt, history=not waking):
                if events:
                    out.append(TailChunk(f.path, None, None, events))
                return out
            if was_gone:
                f.gone = False
                detail = f"going on at line {f.next_line}" if f.offset else "reading"
                events.insert(0, FeedEvent("appeared", f.path, detail))
        try:
            batch, more = f.read(max_bytes)
        except OSError as exc:
            return out + self._broken(f, exc, events)
        if f.unreadable:
            f.unreadable = False
            events.append(FeedEvent("readable", f.path, "the file can be read again"))
        if batch is not None or events or more:
            out.append(TailChunk(f.path, batch, f.state(), events, more, f.written_at()))
        return out

    def _left_while_resting(self, f: _Followed) -> list[TailChunk]:
        """A resting file's name is gone: say where it went. Its saved state stays, so if a
        pattern matches the new name, reading goes on there from the same offset."""
        assert f.rest is not None
        dev, inode = f.rest[:2]
        f.rest = None
        f.gone = True
        renamed = _find_inode(os.path.dirname(f.path), dev, inode)
        kind, detail = moved(False, renamed)
        return [TailChunk(f.path, None, None, [FeedEvent(kind, f.path, detail)])]

    def _retire(self, f: _Followed, fst: os.stat_result) -> None:
        """Remember where an old file's reading ended, in case it shows up under a new name."""
        if f.offset:
            self._retired[(fst.st_dev, fst.st_ino)] = (
                f.offset, f.next_line, f.head, f.parser.header)
            while len(self._retired) > 256:  # only recent rotations can show up again
                self._retired.pop(next(iter(self._retired)))

    def _adoptable(self, path: str, st: os.stat_result) -> FileState | None:
        """A state for a file we already read under another name (a rotated log matched again)."""
        hit = self._retired.pop((st.st_dev, st.st_ino), None)
        if hit is not None:
            offset, next_line, head, header = hit
            return FileState(path, st.st_dev, st.st_ino, fingerprint(head), offset, next_line,
                             header)
        own = self._saved.get(path)
        if own is not None and (own.dev, own.inode) == (st.st_dev, st.st_ino):
            return self._saved.pop(path)  # the usual case, without a search
        for key, saved in list(self._saved.items()):
            if (saved.dev, saved.inode) == (st.st_dev, st.st_ino):
                return self._saved.pop(key)
        return None

    def _own_saved(
        self, path: str, st: os.stat_result, out: list[TailChunk], max_bytes: int
    ) -> FileState | None:
        """The state saved under this name when it names another file now.

        If that other file still exists under a new name (rotated while we were stopped), the
        rows it got after reading stopped are read from it first (unless a pattern follows that
        name, which then resumes it itself), and this name's file is read from its start.
        """
        saved = self._saved.get(path)
        if saved is None:
            return None
        renamed = _find_inode(os.path.dirname(path), saved.dev, saved.inode)
        if renamed is None:
            return self._saved.pop(path)
        if os.path.abspath(renamed) in self._followed:
            return None
        self._saved.pop(path)
        old = _Followed(renamed, self._feed_of[path], self.columns, self.expected,
                        self.fast_block_bytes, self.text_columns)
        events: list[FeedEvent] = []
        if old.open(events, FileState(renamed, saved.dev, saved.inode, saved.fingerprint,
                                      saved.offset, saved.next_line, saved.header)):
            head = [FeedEvent("rotated", path, f"renamed to {renamed}: reading its last rows, "
                              f"then the new file")]
            more = True
            while more:
                batch, more = old.read(max_bytes)
                out.append(TailChunk(renamed, batch, old.state(), [*head, *events],
                                     written_at=old.written_at()))
                head, events = [], []
            old.close()
        return None

    def _continue_in_copy(
        self, f: _Followed, st: os.stat_result, max_bytes: int
    ) -> list[TailChunk]:
        before = f.state()
        f.close()
        events = [
            FeedEvent("replaced", f.path, f"copied over with the same beginning: going on at "
                      f"line {before.next_line}")
        ]
        same = FileState(f.path, st.st_dev, st.st_ino, before.fingerprint, before.offset,
                         before.next_line, before.header)
        if not f.open(events, same):
            return [TailChunk(f.path, None, None, events)]
        batch, more = f.read(max_bytes)
        return [TailChunk(f.path, batch, f.state(), events, more, f.written_at())]
