"""Driving the real program in a real terminal (tmux) for the end-to-end tests."""

from __future__ import annotations

import subprocess
import time
from collections.abc import Callable
from pathlib import Path

WAIT = 40.0  # seconds allowed for each step on a slow machine; normally well under one


def tmux(*args: str) -> str:
    out = subprocess.run(["tmux", *args], capture_output=True, text=True, check=False)
    return out.stdout


def wait_for(check: Callable[[], bool], what: str, screen: Callable[[], str]) -> None:
    """Poll `check` until it holds; fail showing the screen after WAIT seconds."""
    deadline = time.monotonic() + WAIT
    while time.monotonic() < deadline:
        if check():
            return
        time.sleep(0.1)
    raise AssertionError(f"waited {WAIT:.0f}s for {what}; the screen shows:\n{screen()}")


def running(pid: int) -> bool:
    """True while `pid` is a live process (a zombie left for tmux to reap counts as ended)."""
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except (OSError, IndexError):
        return False
    return state != "Z"
