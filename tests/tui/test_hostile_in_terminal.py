"""The real screen in a real terminal (tmux) on hostile logs: a file named with OSC 0 (set the
window title), a JSON-lines key with ESC [ 2 J (clear), OSC 0 and OSC 52 (write the
clipboard), and long-layout characteristics named `[/]` and `[bold red]x`. The pane keeps its
title, tmux receives no clipboard write, the captured screen (`capture-pane -e`, which keeps
the styles as SGR sequences) holds no other escape sequence, the names are shown literally,
and acknowledging an alarm of `[/]` (it once crashed the screen) works; quitting exits 0.

OSC 0 and OSC 52 as xterm defines them, honoured by tmux (common practice).
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
import sys
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest

from .terminal import WAIT, wait_for

HOSTILE_FILE = "R\u001b]0;PWNED\u0007.csv"
HOSTILE_KEY = "od\u001b[2J\u001b]0;PWNED\u0007\u001b]52;c;aGk=\u0007"
NAMES = ["[/]", "[bold red]x"]
SGR = re.compile(r"\x1b\[[0-9;:]*m")  # the only sequences capture-pane -e writes for styles


@pytest.fixture
def tm() -> Iterator[list[str]]:
    """tmux on a server of this test's own, so buffers and titles are ours alone."""
    assert shutil.which("tmux"), "this test needs tmux (apt-get install tmux)"
    base = ["tmux", "-L", f"lw-hostile-{uuid.uuid4().hex[:8]}", "-f", "/dev/null"]
    yield base
    subprocess.run([*base, "kill-server"], capture_output=True, check=False)


def write_logs(folder: Path) -> Path:
    """The long-layout CSV with the hostile file name, the JSON-lines log with the hostile key,
    a config reading both; one far point of `[/]` raises the only alarms."""
    csv = ["time,sample,characteristic,value"]
    for i in range(40):
        for n, name in enumerate(NAMES):
            value = 10 + 0.05 * ((i * 7 + n) % 5 - 2) + (2.0 if i == 30 and n == 0 else 0)
            csv.append(f"2026-03-02T06:{i:02d}:00+01:00,S{i},{name},{value:.3f}")
    (folder / HOSTILE_FILE).write_text("\n".join(csv) + "\n")
    rows = [json.dumps({"time": f"2026-03-02T06:{i:02d}:00+01:00",
                        HOSTILE_KEY: 10 + 0.05 * (i % 3 - 1)})
            for i in range(40)]
    (folder / "gauge.jsonl").write_text("\n".join(rows) + "\n")
    config = folder / "line.toml"
    config.write_text(
        f'[[feed]]\npaths = ["{folder}/*.csv"]\nlayout = "long"\n\n'
        f'[[feed]]\npaths = ["{folder}/*.jsonl"]\nlayout = "jsonl"\n'
    )
    return config


def test_hostile_names_and_files_never_steer_the_terminal(tmp_path: Path,
                                                          tm: list[str]) -> None:
    def run(*args: str) -> str:
        return subprocess.run([*tm, *args], capture_output=True, text=True,
                              check=False).stdout

    config = write_logs(tmp_path)
    command = " ".join([sys.executable, "-m", "linewatch", "watch", "-c", str(config),
                        "--state-dir", str(tmp_path / "state"), "--no-bell"])
    env = f"TERM=xterm-256color PYTHONPATH={os.getcwd()}"
    run("new-session", "-d", "-s", "lw", "-x", "80", "-y", "24",
        f"sh -c 'env {env} {command}; echo \"[exit $?]\"; sleep {WAIT:.0f}'")
    run("select-pane", "-t", "lw", "-T", "lw-title")

    def screen() -> str:
        return run("capture-pane", "-p", "-t", "lw")

    def styled() -> str:
        return run("capture-pane", "-p", "-e", "-t", "lw")

    def assert_untouched() -> None:
        assert run("display-message", "-p", "-t", "lw", "#{pane_title}").strip() == "lw-title"
        assert run("list-buffers") == ""  # no OSC 52 clipboard write reached tmux
        assert SGR.sub("", styled()).count("\x1b") == 0, styled()

    wait_for(lambda: all(n in screen() for n in NAMES), "the board with both names", screen)
    wait_for(lambda: "od\\x1b[2J\\x1b]0" in screen(), "the hostile key, escaped", screen)
    assert_untouched()

    run("send-keys", "-t", "lw", "f")
    wait_for(lambda: "R\\x1b]0;PWNED\\x07.csv" in screen(), "the hostile file, escaped", screen)
    assert_untouched()

    run("send-keys", "-t", "lw", "b")  # the close-up of [/] and its new-baseline panel
    wait_for(lambda: "| board |" in screen(), "the board", screen)
    run("send-keys", "-t", "lw", "Enter")
    wait_for(lambda: "close-up [/]" in screen(), "the close-up of [/]", screen)
    run("send-keys", "-t", "lw", "n")
    wait_for(lambda: "New baseline for [/]" in screen(), "the new-baseline panel", screen)
    assert_untouched()
    run("send-keys", "-t", "lw", "Escape", "Escape")
    wait_for(lambda: "| board |" in screen(), "the board again", screen)

    run("send-keys", "-t", "lw", "a")
    wait_for(lambda: "alarm queue" in screen(), "the alarm queue", screen)
    assert " [/] " in _plan_line(screen()), screen()  # only [/] has alarms
    run("send-keys", "-t", "lw", "Enter")
    wait_for(lambda: "Acknowledge alarm" in screen(), "the acknowledge panel", screen)
    assert_untouched()
    run("send-keys", "-t", "lw", "1")
    run("send-keys", "-t", "lw", "Enter")
    wait_for(lambda: "acknowledged: tool wear" in screen(), "the acknowledgement", screen)
    assert_untouched()

    run("send-keys", "-t", "lw", "q")
    wait_for(lambda: "[exit " in screen(), "the program to end", screen)
    assert "[exit 0]" in screen(), screen()
    assert run("display-message", "-p", "-t", "lw", "#{pane_title}").strip() == "lw-title"


def _plan_line(text: str) -> str:
    """The queue's detail line naming the highlighted alarm ('#17 [/] individuals ...')."""
    return next((line for line in text.splitlines() if line.startswith(" #")), "") + " "
