"""What happened to a followed file, decided from facts alone.

Pure functions of what was known of a file (device and inode, its first bytes, where reading
stopped) and what a stat and a read of its first bytes show now. The tailer gathers the facts
and acts on the answer, so the decision table (rotation, truncation, replacement, a copy that
goes on) is tested without files:

- rename-and-create: the name points at another inode; the old one still has links: the old
  file is finished through its handle, then the new one is read from its start (`rotated`);
- copy-and-truncate: the file got shorter, or its first bytes changed: read again from 0
  (`truncated`); a file that got shorter but still begins like ours is given a grace period to
  grow back first, since copying onto an existing file truncates it before writing the same
  content again;
- a copy written beside and renamed over (a sync tool): the old inode has no links left and the
  new one begins with everything we know of it: reading goes on at the same offset
  (`replaced`);
- a saved state that no longer fits the file met on restart: `replaced` or `truncated`.
"""

from __future__ import annotations

import hashlib
import stat
from dataclasses import dataclass

from linewatch.domain.records import FileState

FINGERPRINT_BYTES = 1024  # first bytes that tell two files apart


def fingerprint(head: bytes) -> str:
    """The stored form of a file's first bytes: their length and digest."""
    return f"{len(head)}:{hashlib.sha256(head).hexdigest()}"


def fingerprint_size(fp: str) -> int:
    """How many first bytes a fingerprint covers (0 when unreadable)."""
    try:
        return int(fp.split(":", 1)[0])
    except ValueError:
        return 0


def kind_of(mode: int) -> str:
    """A file type in words."""
    if stat.S_ISDIR(mode):
        return "a directory"
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    return "a special file"


@dataclass(frozen=True, slots=True)
class Seen:
    """What a stat and a read of the first bytes (at most FINGERPRINT_BYTES) show now."""

    dev: int
    inode: int
    size: int
    head: bytes


@dataclass(frozen=True, slots=True)
class Reopened:
    """How to go on with a file opened with a saved state: at the saved offset (`resume`) or
    from the start, and the event to say (`kind` None: nothing to say)."""

    resume: bool
    kind: str | None = None
    detail: str = ""


def on_reopen(saved: FileState, now: Seen) -> Reopened:
    """Whether a saved reading position still holds for the file opened now."""
    n = fingerprint_size(saved.fingerprint)
    same_start = len(now.head) >= n and fingerprint(now.head[:n]) == saved.fingerprint
    same_inode = (saved.dev, saved.inode) == (now.dev, now.inode)
    if not same_start:
        if not saved.offset:
            return Reopened(False)
        what = "another file" if not same_inode else "new content"
        return Reopened(False, "replaced", f"{what}: reading from the start")
    if now.size < saved.offset:
        return Reopened(False, "truncated", f"shorter than where reading stopped "
                        f"({now.size} < {saved.offset} bytes): reading from the start")
    if same_inode:
        return Reopened(True)
    # the same beginning under a new inode is a copy only when it is long enough to tell
    # files apart; otherwise it is a new file that starts alike
    if n < FINGERPRINT_BYTES:
        return Reopened(False, "replaced", "another file: reading from the start")
    return Reopened(True, "replaced", f"copied over with the same beginning: going on at "
                    f"line {saved.next_line}")


@dataclass(frozen=True, slots=True)
class InPlace:
    """What a stat of the open file says: `why` it must be read again from 0 (None: go on),
    whether to `wait` and see (shorter, but it begins like ours), when it was first seen
    shorter, and the first bytes to remember from now on."""

    why: str | None
    wait: bool
    shrunk_since: float | None
    head: bytes


def first_bytes_needed(size: int, pos: int, head: bytes) -> bool:
    """Whether `in_place` needs the file's first bytes read now (most polls need none)."""
    return (size < pos or (len(head) < FINGERPRINT_BYTES and size > len(head))
            or (bool(head) and size != pos))


def in_place(size: int, pos: int, head: bytes, first: bytes | None,
             shrunk_since: float | None, now: float, grace: float) -> InPlace:
    """Judge the open file from its size and (when `first_bytes_needed`) its first bytes.

    `pos` is where reading got to, `head` the first bytes known of it; a file that got shorter
    but still begins like ours may be in the middle of being copied over with the same content:
    it has `grace` seconds from `shrunk_since` to grow back before it counts as truncated.
    """
    first = first or b""
    if size < pos:
        n = min(size, len(head))
        if first[:n] != head[:n]:
            return InPlace("shorter than before, with other first bytes: reading from the "
                           "start", False, shrunk_since, head)
        since = now if shrunk_since is None else shrunk_since
        if now - since < grace:
            return InPlace(None, True, since, head)
        return InPlace(f"shorter than before ({size} < {pos} bytes): reading from the start",
                       False, since, head)
    if len(head) < FINGERPRINT_BYTES and size > len(head):
        if first[: len(head)] != head:
            return InPlace("its first bytes changed: reading from the start", False, None, head)
        return InPlace(None, False, None, first)  # more of the beginning is known now
    if head and size != pos and first != head:
        return InPlace("its first bytes changed: reading from the start", False, None, head)
    return InPlace(None, False, None, head)


def copy_goes_on(links: int, head: bytes, offset: int, name_size: int,
                 name_head: bytes | None) -> bool:
    """The name now holds a copy of our file that goes on: the old file has no links left
    (unlinked, not renamed away as in a rotation) and the new one, `name_size` bytes long,
    begins (`name_head`, None when it could not be read) with everything we know of it."""
    if links > 0 or not head or name_size < offset or name_head is None:
        return False
    if len(head) < min(offset, FINGERPRINT_BYTES):
        return False
    return name_head[: len(head)] == head


def moved(name_exists: bool, renamed: str | None) -> tuple[str, str]:
    """The event (kind, detail) when the name no longer points at the file being read:
    `renamed` is the old file's name now, if it is still in the folder."""
    if not name_exists:
        return ("rotated", f"renamed to {renamed}") if renamed else ("vanished", "deleted")
    detail = f"old file now {renamed}" if renamed else "the old file was removed"
    return "rotated", f"{detail}; reading the new one"


def resting_change(rest: tuple[int, int, int, int], dev: int, inode: int, size: int,
                   mtime_ns: int) -> str:
    """A resting file (handle closed, `rest` = device, inode, size, mtime when put to rest)
    seen again: "unchanged", "changed" (the same file, to be opened where it stopped) or
    "other" (the name holds another file now)."""
    if rest == (dev, inode, size, mtime_ns):
        return "unchanged"
    return "changed" if rest[:2] == (dev, inode) else "other"
