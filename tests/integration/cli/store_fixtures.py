"""Helpers for the shell-command tests: run the real program, build a state directory."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

from linewatch.alarms.book import AlarmBook
from linewatch.store.actor import Actor
from linewatch.store.db import Store


def linewatch(*args: str, env: dict[str, str] | None = None) -> subprocess.CompletedProcess[str]:
    """Run `python -m linewatch ARGS` as a separate process."""
    full_env = {**os.environ, **(env or {})}
    return subprocess.run(
        [sys.executable, "-m", "linewatch", *args],
        capture_output=True, text=True, timeout=60, env=full_env,
    )


def line_with_alarms(state: Path) -> None:
    """Three alarms at fixed times: a closed one, an open run-rule one, an open out-of-spec one.
    The first returns at its first quiet point (`clear_after=1`), so the acknowledgement closes
    it and the next firing on the same chart opens a new alarm."""
    with Store(state) as store:
        book = AlarmBook(store)
        book.observe_chart("od", "xbar", 0, 1, {"we1": [0]}, now=1_000.0,  # 1: returned
                           clear_after=1)
        book.acknowledge([1], "tool wear", now=1_500.0, actor=Actor("setter"))  # closes 1
        book.observe_chart("od", "xbar", 2, 2, {"we4": [2]}, now=2_000.0)  # 2: active
        book.observe_spec("wall", 0, [1.9, 2.6], lsl=1.8, usl=2.4, now=3_000.0)  # 3: active
