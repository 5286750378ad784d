"""Shared helpers for tests that run real `linewatch watch` processes on real files."""

from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np

HEADER = "time,part,od\n"


def wait_until(predicate, timeout: float = 20.0) -> None:
    """Poll `predicate` until it holds; fail after `timeout` seconds."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if predicate():
            return
        time.sleep(0.05)
    raise AssertionError("condition not reached")


def rows_text(values: np.ndarray, start: int = 0) -> list[str]:
    return [f"2026-03-02T06:{(start + i) // 60 % 60:02d}:{(start + i) % 60:02d},P{start + i},"
            f"{v:.4f}\n" for i, v in enumerate(values)]


def process_series(n: int, seed: int) -> np.ndarray:
    """A seeded normal series with a shift and a drift, so several rules fire (test data)."""
    rng = np.random.default_rng(seed)
    x = rng.normal(10.0, 0.1, n)
    x[n // 2 :] += 0.15
    x[3 * n // 4 :] += np.linspace(0, 0.4, n - 3 * n // 4)
    return np.round(x, 4)


def start_watch(patterns: list[str], state_dir: Path, *extra: str,
                stdout=subprocess.PIPE) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-m", "linewatch", "watch", *patterns, "--no-ui", "--format", "jsonl",
         "--state-dir", str(state_dir), *extra],
        stdout=stdout, stderr=subprocess.PIPE, text=True,
        env={**os.environ, "PYTHONUNBUFFERED": "1"},
    )


def stop(proc: subprocess.Popen, timeout: float = 20) -> tuple[str, str]:
    proc.send_signal(signal.SIGTERM)
    out, err = proc.communicate(timeout=timeout)
    return out or "", err or ""


def records(text: str) -> list[dict]:
    return [json.loads(line) for line in text.splitlines() if line.startswith("{")]


def offset_of(state_dir: Path, path: Path) -> int:
    db = state_dir / "linewatch.db"
    if not db.exists():
        return -1
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=5)
    try:
        row = con.execute("SELECT offset FROM files WHERE path = ?", (str(path),)).fetchone()
    except sqlite3.OperationalError:
        return -1
    finally:
        con.close()
    return -1 if row is None else row[0]


def wait_caught_up(state_dir: Path, path: Path, timeout: float = 30) -> None:
    size = path.stat().st_size
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if offset_of(state_dir, path) == size:
            return
        time.sleep(0.05)
    raise AssertionError(f"the watcher did not reach offset {size} of {path}")


def episodes_of(state_dir: Path) -> list[tuple]:
    """Every alarm episode the audit trail records, as (what, characteristic, chart, first
    firing, last firing or None while it lasts), sorted: what an operator was shown, whichever
    alarm row each episode went to (an acknowledgement closes a row, so the next episode of the
    same condition opens another)."""
    def run(*args: str) -> list[dict]:
        out = subprocess.run([sys.executable, "-m", "linewatch", *args, "--format", "jsonl",
                              "--state-dir", str(state_dir)],
                             capture_output=True, text=True, timeout=60, check=True).stdout
        return records(out)

    group = {a["id"]: ("spec" if a["kind"] == "out-of-spec" else "feed"
                       if a["kind"] == "feed-health" else "control")
             for a in run("alarms", "list", "--all")}
    open_: dict[int, list] = {}
    done: list[tuple] = []
    for e in run("audit", "export"):
        if not e["subject"].startswith("alarm "):
            continue
        alarm_id, p = int(e["subject"].split()[1]), e["payload"]
        if e["action"] in ("raised", "re-raised"):
            first = p.get("first_index", p.get("index"))
            open_[alarm_id] = [group[alarm_id], p["characteristic"], p["chart"], first]
        elif e["action"] == "returned-to-normal" and alarm_id in open_:
            done.append((*open_.pop(alarm_id), p["last_index"]))
    done += [(*ep, None) for ep in open_.values()]
    return sorted(done, key=repr)


def check_signals(path: Path, *extra: str) -> set[tuple]:
    out = subprocess.run(
        [sys.executable, "-m", "linewatch", "check", str(path), "--format", "jsonl", *extra],
        capture_output=True, text=True, timeout=60,
    ).stdout
    return {(r["characteristic"], r["chart"], r["rule"], r["index"]) for r in records(out)
            if r["type"] == "signal"}


class Reader:
    """Collects the JSON lines a process prints, with the time each arrived."""

    def __init__(self, proc: subprocess.Popen) -> None:
        self.lines: list[tuple[float, dict]] = []
        self._t = threading.Thread(target=self._pump, args=(proc,), daemon=True)
        self._t.start()

    def _pump(self, proc) -> None:
        for line in proc.stdout:
            if line.startswith("{"):
                self.lines.append((time.monotonic(), json.loads(line)))

    def wait_for(self, pred, timeout: float = 15) -> tuple[float, dict]:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            for t, rec in list(self.lines):
                if pred(rec):
                    return t, rec
            time.sleep(0.02)
        raise AssertionError(f"no matching record; saw {[r for _, r in self.lines][-5:]}")
