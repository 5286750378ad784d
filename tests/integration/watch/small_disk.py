"""A small real disk for store-fault tests: a tmpfs of a few megabytes mounted on a test
directory, which a test can fill to the last byte and free again.

Use the `small_disk` fixture (import it into the test module), or `mount_small_disk(dir)` as a
context manager. Mounting needs the right to mount (root, or CAP_SYS_ADMIN); where it is
refused the fixture skips the test and says so, and nothing else is ever skipped.
"""

from __future__ import annotations

import contextlib
import errno
import os
import subprocess
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import pytest

FILLER = ".filler"
_CHUNKS = (1 << 20, 1 << 16, 1 << 12, 1 << 9, 1)


class MountRefused(RuntimeError):
    """This process may not mount a tmpfs here (the reason is the message)."""


@dataclass(frozen=True, slots=True)
class SmallDisk:
    """A mounted tmpfs at `path`; `fill` takes every free byte, `free` gives them back."""

    path: Path

    @property
    def filler(self) -> Path:
        return self.path / FILLER

    def free_bytes(self) -> int:
        """Bytes an unprivileged writer could still write (statvfs f_bavail)."""
        st = os.statvfs(self.path)
        return st.f_bavail * st.f_frsize

    def fill(self) -> int:
        """Write a filler file until the disk refuses another byte; returns its size."""
        fd = os.open(self.filler, os.O_WRONLY | os.O_CREAT | os.O_APPEND, 0o600)
        try:
            for size in _CHUNKS:
                block = b"\0" * size
                while True:
                    try:
                        if os.write(fd, block) < size:
                            break
                    except OSError as exc:
                        if exc.errno != errno.ENOSPC:
                            raise
                        break
        finally:
            os.close(fd)
        return self.filler.stat().st_size

    def free(self) -> None:
        """Remove the filler: the disk has its room back."""
        self.filler.unlink(missing_ok=True)


def _mount(path: Path, size: str) -> None:
    done = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", f"size={size},mode=0700", "tmpfs", str(path)],
        capture_output=True, text=True, timeout=30,
    )
    if done.returncode != 0:
        raise MountRefused(done.stderr.strip() or f"mount exited with {done.returncode}")


def _unmount(path: Path) -> None:
    done = subprocess.run(["umount", str(path)], capture_output=True, timeout=30)
    if done.returncode != 0:  # still busy (a process a test left running): detach lazily
        subprocess.run(["umount", "-l", str(path)], capture_output=True, timeout=30)


@contextlib.contextmanager
def mount_small_disk(path: Path, size: str = "4m") -> Iterator[SmallDisk]:
    """Mount a tmpfs of `size` (mount's syntax: "2m", "512k") on `path` for the block.
    Skips the calling test, naming the reason, when mounting is refused."""
    path.mkdir(parents=True, exist_ok=True)
    try:
        _mount(path, size)
    except (MountRefused, FileNotFoundError) as exc:
        pytest.skip(f"needs a small tmpfs, and mounting one is not permitted here: {exc}")
    try:
        yield SmallDisk(path)
    finally:
        _unmount(path)


@pytest.fixture
def small_disk(tmp_path: Path) -> Iterator[SmallDisk]:
    """A 4 MB tmpfs under the test's directory, unmounted afterwards."""
    with mount_small_disk(tmp_path / "small-disk") as disk:
        yield disk
