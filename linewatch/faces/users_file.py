"""The people who may sign in to the browser view: a text file of names and scrypt hashes.

One user a line, `name:scrypt:N:r:p:SALT:HASH` (salt and hash in base64), `#` starts a comment.
Only hashes are kept, never a password; the file is written whole to a temporary file and
renamed, readable by its owner only. Standard library only (hashlib.scrypt), so the command
that adds a user starts quickly and the server checks a password without another library.
"""

from __future__ import annotations

import base64
import binascii
import hashlib
import hmac
import os
import re
import secrets
import tempfile
from dataclasses import dataclass
from pathlib import Path

from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible

SCHEME = "scrypt"
# scrypt cost: N=2^14, r=8, p=1 (16 MiB, tens of milliseconds: common practice for logins)
COST_N, COST_R, COST_P = 16_384, 8, 1
SALT_BYTES = 16
HASH_BYTES = 32
MIN_PASSWORD = 8
MAX_COST_N = 1 << 20  # a file asking for more is refused rather than exhausting memory
NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9._@-]{0,63}")


@dataclass(frozen=True, slots=True)
class UserRecord:
    """One user's line: the name and the scrypt parameters, salt and hash of the password."""

    name: str
    n: int
    r: int
    p: int
    salt: bytes
    digest: bytes

    def matches(self, password: str) -> bool:
        """Whether `password` gives this hash (compared in constant time)."""
        return hmac.compare_digest(_scrypt(password, self.salt, self.n, self.r, self.p,
                                           len(self.digest)), self.digest)

    def line(self) -> str:
        salt = base64.b64encode(self.salt).decode("ascii")
        digest = base64.b64encode(self.digest).decode("ascii")
        return f"{self.name}:{SCHEME}:{self.n}:{self.r}:{self.p}:{salt}:{digest}"


def _scrypt(password: str, salt: bytes, n: int, r: int, p: int, length: int) -> bytes:
    return hashlib.scrypt(password.encode("utf-8"), salt=salt, n=n, r=r, p=p, dklen=length,
                          maxmem=256 * n * r * p + (1 << 20))


def check_name(name: str) -> str:
    """A user name as the file keeps it: letters, digits and . _ @ - (at most 64)."""
    if not NAME.fullmatch(name):
        raise LinewatchError(
            f"user name {visible(name)!r} is not usable: 1 to 64 letters, digits or . _ @ -, "
            "starting with a letter or digit")
    return name


def new_record(name: str, password: str) -> UserRecord:
    """A record for `name` with a fresh salt; the password must have MIN_PASSWORD characters."""
    check_name(name)
    if len(password) < MIN_PASSWORD:
        raise LinewatchError(f"the password must have at least {MIN_PASSWORD} characters")
    salt = secrets.token_bytes(SALT_BYTES)
    return UserRecord(name, COST_N, COST_R, COST_P, salt,
                      _scrypt(password, salt, COST_N, COST_R, COST_P, HASH_BYTES))


def parse_line(text: str, where: str) -> UserRecord:
    """One line of the file; a LinewatchError naming `where` (file:line) and what is wrong."""
    parts = text.split(":")
    if len(parts) != 7 or parts[1] != SCHEME:
        raise LinewatchError(f"{where}: expected name:{SCHEME}:N:r:p:salt:hash")
    name = check_name(parts[0])
    try:
        n, r, p = (int(v) for v in parts[2:5])
        salt = base64.b64decode(parts[5], validate=True)
        digest = base64.b64decode(parts[6], validate=True)
    except (ValueError, binascii.Error) as exc:
        raise LinewatchError(f"{where}: unreadable scrypt figures ({exc})") from exc
    if not (1 < n <= MAX_COST_N and n & (n - 1) == 0 and 0 < r <= 64 and 0 < p <= 64):
        raise LinewatchError(f"{where}: scrypt N must be a power of 2 up to {MAX_COST_N}, "
                             "r and p from 1 to 64")
    if not salt or len(digest) < 16:
        raise LinewatchError(f"{where}: salt or hash too short")
    return UserRecord(name, n, r, p, salt, digest)


class UserList:
    """The users of one file, by name."""

    def __init__(self, users: dict[str, UserRecord], path: Path | None = None) -> None:
        self.users = users
        self.path = path
        # a stand-in hashed for unknown names, so a wrong name costs the time a wrong password does
        self._decoy = UserRecord("-", COST_N, COST_R, COST_P, b"\0" * SALT_BYTES,
                                 b"\0" * HASH_BYTES)

    @classmethod
    def load(cls, path: str | Path) -> UserList:
        """Read the file; a missing, unreadable or bad file is a LinewatchError naming it."""
        path = Path(path)
        try:
            text = path.read_text(encoding="utf-8")
        except (OSError, UnicodeDecodeError) as exc:
            raise LinewatchError(f"cannot read the user file {visible(str(path))}: "
                                 f"{visible(str(exc))}") from exc
        users: dict[str, UserRecord] = {}
        for number, raw in enumerate(text.splitlines(), start=1):
            line = raw.strip()
            if not line or line.startswith("#"):
                continue
            record = parse_line(line, f"{visible(str(path))}:{number}")
            if record.name in users:
                raise LinewatchError(f"{visible(str(path))}:{number}: user "
                                     f"{record.name!r} is listed twice")
            users[record.name] = record
        return cls(users, path)

    def check(self, name: str, password: str) -> bool:
        """Whether `name` is listed and `password` is theirs."""
        record = self.users.get(name)
        if record is None:
            self._decoy.matches(password)
            return False
        return record.matches(password)

    def __len__(self) -> int:
        return len(self.users)


def _write(path: Path, users: dict[str, UserRecord]) -> None:
    """The whole file, through a temporary file renamed over it (mode 0600)."""
    lines = ["# linewatch browser users: name:scrypt:N:r:p:salt:hash (hashes, never passwords)"]
    lines += [u.line() for u in users.values()]
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".tmp")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write("\n".join(lines) + "\n")
            f.flush()
            os.fsync(f.fileno())
        os.chmod(tmp, 0o600)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _existing(path: Path) -> dict[str, UserRecord]:
    return dict(UserList.load(path).users) if path.exists() else {}


def set_user(path: str | Path, name: str, password: str) -> bool:
    """Add `name` with `password`, or give a listed user a new one; True when newly added."""
    path = Path(path)
    users = _existing(path)
    added = name not in users
    users[name] = new_record(name, password)
    _write(path, users)
    return added


def remove_user(path: str | Path, name: str) -> None:
    """Take `name` off the list (a LinewatchError when not listed)."""
    path = Path(path)
    users = _existing(path)
    if name not in users:
        raise LinewatchError(f"user {visible(name)!r} is not in {visible(str(path))}")
    del users[name]
    _write(path, users)
