"""A file the monitor may not read is reported, and the other feeds go on.

The scenario runs in a real child process. Tests here often run as root, which ignores file
permissions; the child then gives up root for its file access (effective uid `nobody`) after
its imports, so the kernel refuses the open for real, and takes root back to show recovery.
As an ordinary user the child simply removes and restores its own read permission.
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import tempfile
from pathlib import Path

CHILD = r"""
import json, os, sys
from linewatch.feeds.tailer import Tailer

folder = sys.argv[1]
good, locked = os.path.join(folder, "good.csv"), os.path.join(folder, "locked.csv")
root = os.geteuid() == 0

def lock():
    if root:
        os.seteuid(65534)
    else:
        os.chmod(locked, 0)

def unlock():
    if root:
        os.seteuid(0)
    else:
        os.chmod(locked, 0o644)

def poll(t):
    out = {"events": [], "rows": {}}
    for c in t.poll():
        out["events"] += [[e.kind, os.path.basename(e.file)] for e in c.events]
        if c.batch is not None:
            for name, vals in c.batch.values.items():
                out["rows"].setdefault(os.path.basename(c.batch.file), []).extend(
                    float(v) for v in vals)
    return out

t = Tailer([], None, None, patterns=[os.path.join(folder, "*.csv")])
lock()
first = poll(t)
with open(good, "a") as fh:
    fh.write("06:02,25.2\n")
second = poll(t)
unlock()
third = poll(t)
t.close()
print(json.dumps([first, second, third]))
"""


def test_an_unreadable_file_is_reported_and_the_other_feeds_go_on() -> None:
    folder = Path(tempfile.mkdtemp(prefix="linewatch-perm-"))
    try:
        folder.chmod(0o777)
        good, locked = folder / "good.csv", folder / "locked.csv"
        good.write_text("time,od\n06:00,25.0\n06:01,25.1\n")
        locked.write_text("time,od\n06:00,30.0\n")
        good.chmod(0o666)
        locked.chmod(0o600)
        out = subprocess.run(
            [sys.executable, "-c", CHILD, str(folder)],
            capture_output=True, text=True, timeout=60, cwd=os.getcwd(),
        )
        assert out.returncode == 0, out.stderr
        first, second, third = json.loads(out.stdout)
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    assert ["unreadable", "locked.csv"] in first["events"]
    assert first["rows"] == {"good.csv": [25.0, 25.1]}
    assert second["rows"] == {"good.csv": [25.2]}
    assert ["unreadable", "locked.csv"] not in second["events"]  # said once, not every poll
    assert ["readable", "locked.csv"] in third["events"]
    assert third["rows"] == {"locked.csv": [30.0]}


def test_a_read_error_is_reported_once_and_never_looks_like_work(tmp_path: Path) -> None:
    # /proc/self/mem is a regular file that opens but fails every read at offset 0 with EIO:
    # a real I/O error, like a network share that went away under an open file
    from linewatch.feeds.tailer import Tailer

    good = tmp_path / "good.csv"
    good.write_text("time,od\n06:00,25.0\n")
    t = Tailer([], None, None, patterns=[str(good), "/proc/self/mem"])
    try:
        first = t.poll()
        events = [(e.kind, e.file) for c in first for e in c.events]
        assert ("unreadable", "/proc/self/mem") in events
        assert [list(c.batch.values["od"]) for c in first if c.batch] == [[25.0]]
        assert t.poll() == []  # nothing new: an idle loop may sleep
        assert t.status() == {str(good): "reading", "/proc/self/mem": "unreadable"}
        with open(good, "a") as fh:
            fh.write("06:01,25.1\n")
        again = t.poll()
        assert [c.path for c in again] == [str(good)]
    finally:
        t.close()
