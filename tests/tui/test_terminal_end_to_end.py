"""End to end in a real terminal (tmux): the real program follows a real file, an out-of-limit
row raises an alarm on screen, keypresses acknowledge it, and the store records who and why."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import uuid
from collections.abc import Callable, Iterator
from pathlib import Path

import pytest

from .terminal import running, tmux, wait_for


@pytest.fixture
def session(tmp_path: Path) -> Iterator[str]:
    assert shutil.which("tmux"), "this test needs tmux (apt-get install tmux)"
    name = f"lw-e2e-{uuid.uuid4().hex[:8]}"
    yield name
    subprocess.run(["tmux", "kill-session", "-t", name], capture_output=True, check=False)


def open_board(
    tmp_path: Path, session: str, log: Path
) -> tuple[Path, Callable[[], str], int]:
    """Start the real `watch` screen on `log` (known centre 10, σ 0.1) in tmux and wait for
    the board; returns the state directory, a screen reader and the program's pid."""
    state = tmp_path / "state"
    pid_file = tmp_path / "watch.pid"
    command = " ".join([sys.executable, "-m", "linewatch", "watch", str(log), "--center", "10",
                        "--sigma", "0.1", "--state-dir", str(state), "--no-bell"])
    env = f"TERM=xterm-256color PYTHONPATH={os.getcwd()}"
    tmux("new-session", "-d", "-s", session, "-x", "80", "-y", "24",
         f"sh -c 'echo $$ > {pid_file}; exec env {env} {command}'; sleep 30")

    def screen() -> str:
        return tmux("capture-pane", "-p", "-t", session)

    wait_for(lambda: " od " in screen() and "board" in screen(), "the board", screen)
    return state, screen, int(pid_file.read_text())


def test_acknowledge_an_alarm_by_keypress_and_find_it_in_the_store(
    tmp_path: Path, session: str
) -> None:
    log = tmp_path / "od.csv"
    # In-control rows around the known centre 10.0 (σ 0.1): all within ±1σ.
    rows = [f"2026-01-01T08:{i:02d}:00,{10.0 + 0.05 * ((i * 7) % 5 - 2) / 2:.3f}"
            for i in range(30)]
    log.write_text("time,od\n" + "\n".join(rows) + "\n")
    state, screen, _ = open_board(tmp_path, session, log)
    with log.open("a") as f:
        f.write("2026-01-01T08:30:00,11.000\n")  # ten σ above the centre: beyond the UCL
    # the individual value and its moving range both go beyond their UCL: two alarms
    wait_for(lambda: "2 to acknowledge" in screen(), "the alarms on the board", screen)

    tmux("send-keys", "-t", session, "a")
    wait_for(lambda: "alarm queue" in screen() and "individuals: we1" in screen()
             and "moving-range: we1" in screen(), "the alarm queue", screen)
    tmux("send-keys", "-t", session, "Enter")
    wait_for(lambda: "Acknowledge alarm" in screen(), "the acknowledge panel", screen)
    reasons = {line.strip(" │|")[0]: line.strip(" │|")[2:].strip()
               for line in screen().splitlines()
               if "│" in line and line.strip(" │|")[:2] in ("1 ", "2 ")}  # the panel's lines
    tmux("send-keys", "-t", session, "1")
    tmux("send-keys", "-t", session, "Enter")
    wait_for(lambda: "1 to acknowledge" in screen(), "the first acknowledgement", screen)
    # the other one with the key that acknowledges every alarm of the characteristic
    tmux("send-keys", "-t", session, "K")
    wait_for(lambda: "Acknowledge all" in screen(), "the acknowledge-all panel", screen)
    tmux("send-keys", "-t", session, "2")
    tmux("send-keys", "-t", session, "Enter")
    wait_for(lambda: "nothing to acknowledge" in screen(), "the second acknowledgement", screen)
    tmux("send-keys", "-t", session, "q")
    wait_for(lambda: "linewatch" not in screen() or "[exit" in screen() or screen().strip() == "",
             "the program to quit", screen)

    listed = subprocess.run(
        [sys.executable, "-m", "linewatch", "alarms", "list", "--all", "--format", "jsonl",
         "--state-dir", str(state)],
        capture_output=True, text=True, check=True,
    ).stdout
    alarms = [json.loads(line) for line in listed.splitlines() if line.strip()]
    assert len(alarms) == 2, alarms
    assert all(a["acknowledged_by"] and a["characteristic"] == "od" for a in alarms), alarms
    assert sorted(a["reason"] for a in alarms) == sorted([reasons["1"], reasons["2"]])


def test_a_closed_terminal_ends_the_screen_and_its_collector(
    tmp_path: Path, session: str
) -> None:
    """An SSH session that drops (SIGHUP): the program quits the normal way and ends, instead
    of lingering on a terminal that is gone; the store it leaves verifies."""
    log = tmp_path / "od.csv"
    log.write_text("time,od\n" + "".join(f"2026-01-01T08:{i:02d}:00,10.0{i % 3}\n"
                                          for i in range(30)))
    state, screen, pid = open_board(tmp_path, session, log)
    tmux("kill-session", "-t", session)
    wait_for(lambda: not running(pid), "the program to end after the hang-up", screen)
    verified = subprocess.run(
        [sys.executable, "-m", "linewatch", "audit", "verify", "--state-dir", str(state)],
        capture_output=True, text=True, timeout=60)
    assert verified.returncode == 0, verified.stdout + verified.stderr
    # it quit the normal way: the collector gave its lease up (a killed one leaves it to expire)
    from linewatch.store.db import Store
    from linewatch.store.lease import Lease

    with Store(state) as store:
        assert Lease(store).holder() is None
