"""`linewatch demo` in a real terminal (tmux): it opens the screen on a simulated line within
seconds, and its temporary folder goes away however it ends (quit key, hang-up)."""

from __future__ import annotations

import shutil
import sys
import uuid
from pathlib import Path

import pytest

from .terminal import running, tmux, wait_for


@pytest.mark.parametrize("ending", ["quit key", "hang-up"])
def test_demo_opens_the_line_and_cleans_up_after_itself(tmp_path: Path, ending: str) -> None:
    assert shutil.which("tmux"), "this test needs tmux (apt-get install tmux)"
    name = f"lw-demo-{uuid.uuid4().hex[:8]}"
    pid_file = tmp_path / "demo.pid"
    tmux("new-session", "-d", "-s", name, "-x", "80", "-y", "24",
         f"sh -c 'echo $$ > {pid_file}; exec env TERM=xterm-256color TMPDIR={tmp_path} "
         f"{sys.executable} -m linewatch demo'; sleep 30")

    def screen() -> str:
        return tmux("capture-pane", "-p", "-t", name)

    def demo_folders() -> list[Path]:
        return list(tmp_path.glob("linewatch-demo-*"))

    try:
        wait_for(lambda: all(c in screen() for c in ("outer-diameter", "wall-thickness",
                                                    "fill-weight")), "the board", screen)
        assert len(demo_folders()) == 1
        assert (demo_folders()[0] / "od_gauge.csv").exists()
        if ending == "quit key":
            tmux("send-keys", "-t", name, "q")
        else:
            tmux("kill-session", "-t", name)  # the terminal goes away: SIGHUP
        wait_for(lambda: not demo_folders(), "the temporary folder to go", screen)
        # and the process itself ends: nothing lingers reading a terminal that is gone
        pid = int(pid_file.read_text())
        wait_for(lambda: not running(pid), "the demo process to end", screen)
    finally:
        tmux("kill-session", "-t", name)
