"""A last-resort way out after a hang-up, when the normal one hangs.

Quitting the screen normally stops the terminal driver, which writes its last escape sequences
to the terminal. When the terminal is already gone (a closed window, a dropped SSH session)
that can block for ever, leaving a process behind that holds the collector's place. After a
hang-up the screen therefore also arms `exit_later`: if the process is still there after the
grace period, the clean-ups registered with `on_forced_exit` run (newest first, each at most
once, failures ignored) and the process ends with `os._exit`.
"""

from __future__ import annotations

import contextlib
import os
import threading
from collections.abc import Callable

_cleanups: list[Callable[[], None]] = []
_lock = threading.Lock()


def on_forced_exit(cleanup: Callable[[], None]) -> Callable[[], None]:
    """Register `cleanup` for a forced exit; returns a function that unregisters it (call it
    once the normal way out has done the same work)."""
    with _lock:
        _cleanups.append(cleanup)

    def forget() -> None:
        with _lock, contextlib.suppress(ValueError):
            _cleanups.remove(cleanup)

    return forget


def force_exit(code: int) -> None:
    """Run the registered clean-ups, newest first, then end the process at once."""
    while True:
        with _lock:
            if not _cleanups:
                break
            cleanup = _cleanups.pop()
        with contextlib.suppress(Exception):
            cleanup()
    os._exit(code)


def exit_later(code: int, grace: float) -> threading.Timer:
    """Force the exit after `grace` seconds unless the process has ended by then."""
    timer = threading.Timer(grace, force_exit, (code,))
    timer.daemon = True
    timer.start()
    return timer
