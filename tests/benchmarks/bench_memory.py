"""Benchmark (run on demand): memory of a collector under sustained load, headless or on screen.

FILES logs each get RATE rows per second for SECONDS seconds (one characteristic per file); the
collector's resident memory (psutil) is sampled every 5 s. Flat means: after the first
samples, it grows no further while rows keep coming. Headless, stdout is read and dropped, as
a log shipper would. With --screen the collector runs with its screen, on a pseudo-terminal of
160x48 whose output is read and dropped, as a terminal would draw it.

    python tests/benchmarks/bench_memory.py [--screen] [FILES] [RATE] [SECONDS]
"""

from __future__ import annotations

import fcntl
import os
import pty
import sqlite3
import struct
import subprocess
import sys
import tempfile
import termios
import threading
import time
from pathlib import Path

import numpy as np
import psutil


def start_headless(argv: list[str]) -> subprocess.Popen[str]:
    proc = subprocess.Popen([*argv, "--no-ui", "--format", "jsonl"], stdout=subprocess.PIPE,
                            stderr=subprocess.DEVNULL, text=True,
                            env={**os.environ, "PYTHONUNBUFFERED": "1"})
    out = proc.stdout
    assert out is not None
    threading.Thread(target=lambda: [None for _ in out], daemon=True).start()
    return proc


def start_on_screen(argv: list[str]) -> subprocess.Popen[str]:
    """The collector with its screen on a 160x48 pseudo-terminal, its output drained."""
    leader, follower = pty.openpty()
    fcntl.ioctl(follower, termios.TIOCSWINSZ, struct.pack("HHHH", 48, 160, 0, 0))
    proc = subprocess.Popen(argv, stdin=follower, stdout=follower, stderr=follower,
                            start_new_session=True, text=True,
                            env={**os.environ, "TERM": "xterm-256color", "COLUMNS": "160",
                                 "LINES": "48"})
    os.close(follower)

    def drain() -> None:
        try:
            while os.read(leader, 65536):
                pass
        except OSError:
            pass  # the screen closed its end

    threading.Thread(target=drain, daemon=True).start()
    return proc


def main(files: int, rate: float, seconds: float, screen: bool) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        logs = [folder / f"g{k:03d}.csv" for k in range(files)]
        for log in logs:
            log.write_text(f"time,{log.stem}\n")  # one characteristic per file
        argv = [sys.executable, "-m", "linewatch", "watch", str(folder / "g*.csv"),
                "--state-dir", str(folder / "state"), "--baseline", "25"]
        proc = start_on_screen(argv) if screen else start_headless(argv)
        rng = np.random.default_rng(1)
        handles = [log.open("a") for log in logs]
        mem = psutil.Process(proc.pid)
        samples: list[tuple[float, float]] = []
        began = time.monotonic()
        written = 0
        next_sample = began + 5
        while time.monotonic() - began < seconds:
            tick = time.monotonic()
            for h in handles:
                values = rng.normal(10.0, 0.1, int(rate / 10))
                h.writelines(f"t,{v:.4f}\n" for v in values)
                h.flush()
                written += values.shape[0]
            if tick >= next_sample:
                samples.append((tick - began, mem.memory_info().rss / 2**20))
                next_sample += 5
            time.sleep(max(0.0, 0.1 - (time.monotonic() - tick)))
        for h in handles:
            h.close()
        time.sleep(5)
        samples.append((time.monotonic() - began, mem.memory_info().rss / 2**20))
        proc.terminate()
        proc.wait(timeout=60)
        con = sqlite3.connect(folder / "state" / "linewatch.db")
        stored = con.execute("SELECT COUNT(*) FROM points").fetchone()[0]
        con.close()
    face = "screen" if screen else "headless"
    print(f"{face}, {files} files x {rate:g} rows/s for {seconds:g} s: {written} rows written, "
          f"{stored} stored")
    for t, rss in samples:
        print(f"  {t:5.0f} s  {rss:7.1f} MB")


if __name__ == "__main__":
    args = [float(a) for a in sys.argv[1:] if a != "--screen"]
    main(int(args[0]) if args else 200, args[1] if len(args) > 1 else 50.0,
         args[2] if len(args) > 2 else 60.0, "--screen" in sys.argv[1:])
