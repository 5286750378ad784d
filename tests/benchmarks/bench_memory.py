"""Benchmark (run on demand): memory of a headless collector under sustained load.

FILES logs each get RATE rows per second for SECONDS seconds (one characteristic per file); the
collector's resident memory (psutil) is sampled every 5 s. Flat means: after the first
samples, it grows no further while rows keep coming. Stdout is read and dropped, as a log
shipper would.

    python tests/benchmarks/bench_memory.py [FILES] [RATE] [SECONDS]
"""

from __future__ import annotations

import os
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np
import psutil


def main(files: int, rate: float, seconds: float) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        logs = [folder / f"g{k:03d}.csv" for k in range(files)]
        for log in logs:
            log.write_text(f"time,{log.stem}\n")  # one characteristic per file
        proc = subprocess.Popen(
            [sys.executable, "-m", "linewatch", "watch", str(folder / "g*.csv"), "--no-ui",
             "--format", "jsonl", "--state-dir", str(folder / "state"), "--baseline", "25"],
            stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True,
            env={**os.environ, "PYTHONUNBUFFERED": "1"})
        drain = threading.Thread(target=lambda: [None for _ in proc.stdout], daemon=True)
        drain.start()
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
    print(f"{files} files x {rate:g} rows/s for {seconds:g} s: {written} rows written, "
          f"{stored} stored")
    for t, rss in samples:
        print(f"  {t:5.0f} s  {rss:7.1f} MB")


if __name__ == "__main__":
    args = [float(a) for a in sys.argv[1:]]
    main(int(args[0]) if args else 200, args[1] if len(args) > 1 else 50.0,
         args[2] if len(args) > 2 else 60.0)
