"""Simulated lines for the plant tests: each a real `linewatch watch` process on its own log
and state directory, forwarding to a real PostgreSQL database; and the comparison of a line's
store with what the central database holds for it."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import psycopg

from linewatch.plant.forward import iter_rows
from linewatch.store.outbox import FORWARDED, LOCAL_META

HEADER = "time,part,od,bore\n"


class Line:
    """One line PC: a log, a config naming the central database, a collector process."""

    def __init__(self, folder: Path, name: str, url: str, seed: int) -> None:
        self.folder = folder
        self.name = name
        folder.mkdir(parents=True, exist_ok=True)
        self.log = folder / "line.csv"
        self.log.write_text(HEADER)
        self.state = folder / "state"
        self.config = folder / "line.toml"
        self.config.write_text(
            "[monitor]\nbaseline = 20\nstate_dir = \"state\"\n"
            f"[plant]\nurl = \"{url}\"\nline = \"{name}\"\n"
            "[[feed]]\npaths = [\"line.csv\"]\n", encoding="utf-8")
        self.rng = np.random.default_rng(seed)
        self.written = 0
        self.proc: subprocess.Popen[str] | None = None

    def start(self, env: dict[str, str] | None = None) -> None:
        out = (self.folder / "watch.out").open("a")
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "linewatch", "watch", "-c", str(self.config), "--no-ui",
             "--format", "jsonl"],
            stdout=out, stderr=subprocess.STDOUT, text=True,
            env={**os.environ, "PYTHONUNBUFFERED": "1", **(env or {})})
        out.close()

    def write(self, rows: int) -> None:
        """Append rows of invented test data (a shift after 100 rows, so alarms are raised)."""
        od = self.rng.normal(10.0, 0.1, rows) + np.where(
            np.arange(self.written, self.written + rows) > 100, 0.25, 0.0)
        bore = self.rng.normal(4.0, 0.02, rows)
        with self.log.open("a") as f:
            for i in range(rows):
                n = self.written + i
                f.write(f"2026-03-02T06:{n // 60 % 60:02d}:{n % 60:02d},P{n},{od[i]:.4f},"
                        f"{bore[i]:.4f}\n")
        self.written += rows

    def kill(self) -> None:
        assert self.proc is not None
        self.proc.kill()
        self.proc.wait(30)

    def stop(self) -> None:
        if self.proc is not None and self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            self.proc.wait(60)

    def output(self) -> str:
        return (self.folder / "watch.out").read_text(errors="replace")

    def _db(self) -> sqlite3.Connection:
        return sqlite3.connect(f"file:{self.state / 'linewatch.db'}?mode=ro", uri=True,
                               timeout=10)

    def offset(self) -> int:
        if not (self.state / "linewatch.db").exists():
            return -1
        con = self._db()
        try:
            row = con.execute("SELECT offset FROM files").fetchone()
        except sqlite3.OperationalError:
            return -1
        finally:
            con.close()
        return -1 if row is None else int(row[0])

    def waiting(self) -> int:
        """Outbox entries the central database has not confirmed."""
        con = self._db()
        try:
            sent = con.execute("SELECT sent FROM outbox_position").fetchone()[0]
            return int(con.execute("SELECT COUNT(*) FROM outbox WHERE seq > ?",
                                   (sent,)).fetchone()[0])
        finally:
            con.close()

    def read_all(self) -> bool:
        return self.offset() == self.log.stat().st_size

    def rows(self, table: str) -> list[tuple[object, ...]]:
        con = self._db()
        try:
            rows = [tuple(r) for r in con.execute(f"SELECT * FROM {table}")]
        finally:
            con.close()
        if table == "meta":
            rows = [r for r in rows if not str(r[0]).startswith(LOCAL_META)]
        return sorted(rows, key=repr)


def wait_until(predicate, timeout: float, what: str) -> None:
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if predicate():
            return
        time.sleep(0.1)
    raise AssertionError(f"not reached within {timeout:.0f} s: {what}")


def central_rows(url: str, line: str, table: str) -> list[tuple[object, ...]]:
    with psycopg.connect(url) as conn:
        return sorted(iter_rows(conn, table, line), key=repr)


def assert_central_holds_the_line(url: str, line: Line) -> dict[str, int]:
    """Every forwarded table: the same rows centrally as in the line's store, no more, no
    fewer (so no duplicates); returns the counts per table."""
    counts = {}
    with psycopg.connect(url) as conn:
        for f in FORWARDED:
            local = line.rows(f.table)
            central = sorted(iter_rows(conn, f.table, line.name), key=repr)
            assert len(central) == len(local), (line.name, f.table, len(central), len(local))
            assert central == local, (line.name, f.table)
            counts[f.table] = len(local)
    return counts


def verify_central(url: str, line: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "linewatch", "audit", "verify", "--plant", url, "--line", line],
        capture_output=True, text=True, timeout=60)
