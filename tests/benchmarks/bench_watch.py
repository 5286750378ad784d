"""Benchmark (run on demand): `linewatch watch --no-ui` end to end.

1. Sustained throughput: a history over 20 characteristics read by a fresh collector, in long
   layout (ROWS rows of one value) and wide layout (ROWS/20 rows of 20 values); rows per second
   until the store holds every value.
2. Latency: rows appended one at a time to a followed file; time from the write to the signal
   record on stdout (every row is beyond the limits, so every row signals); p50 and p95.
3. Idle: CPU used by a collector following quiet files for 10 seconds.

    python tests/benchmarks/bench_watch.py [ROWS]
"""

from __future__ import annotations

import json
import os
import selectors
import signal
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np


def start(args: list[str]) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "linewatch", "watch", *args, "--no-ui",
                             "--format", "jsonl"], stdout=subprocess.PIPE,
                            stderr=subprocess.DEVNULL, text=True,
                            env={**os.environ, "PYTHONUNBUFFERED": "1"})


def stored_points(db: Path) -> int:
    try:
        con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=5)
        n = con.execute("SELECT COUNT(*) FROM points").fetchone()[0]
        con.close()
        return n
    except sqlite3.Error:
        return 0


def throughput(tmp: Path, rows: int, layout: str) -> float:
    """Rows per second for a collector catching up on `rows` rows over 20 characteristics:
    long layout (one value per row) or wide (20 values per row)."""
    rng = np.random.default_rng(3)
    log = tmp / f"{layout}.csv"
    names = [f"c{k:02d}" for k in range(20)]
    with log.open("w") as f:
        if layout == "long":
            f.write("characteristic,value\n")
            f.writelines(f"{names[i % 20]},{v:.4f}\n"
                         for i, v in enumerate(rng.normal(10, 1, rows)))
        else:
            f.write(",".join(names) + "\n")
            block = rng.normal(10, 1, (rows, 20))
            f.writelines(",".join(f"{v:.4f}" for v in r) + "\n" for r in block)
    cfg = tmp / f"{layout}.toml"
    cfg.write_text(f'[[feed]]\npaths = ["{log}"]\nlayout = "{layout}"\n')
    state = tmp / f"state-{layout}"
    values = rows if layout == "long" else rows * 20
    t0 = time.perf_counter()
    proc = start(["-c", str(cfg), "--state-dir", str(state), "--rules", "western-electric",
                  "--baseline", "100"])
    while stored_points(state / "linewatch.db") < values:
        time.sleep(0.1)
    elapsed = time.perf_counter() - t0
    proc.send_signal(signal.SIGTERM)
    proc.communicate(timeout=60)
    return rows / elapsed


def latency(tmp: Path, n: int = 200) -> tuple[float, float]:
    log = tmp / "lat.csv"
    base = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 3
    log.write_text("od\n" + "".join(f"{v}\n" for v in base))
    proc = start([str(log), "--state-dir", str(tmp / "state-lat"), "--baseline", "30",
                  "--rules", "we1"])
    sel = selectors.DefaultSelector()
    sel.register(proc.stdout, selectors.EVENT_READ)
    time.sleep(3)
    delays = []
    with log.open("a") as f:
        for k in range(n):
            value = 20.0 if k % 2 == 0 else 0.0  # alternate far above / far below
            t = time.perf_counter()
            f.write(f"{value}\n")
            f.flush()
            while True:
                line = proc.stdout.readline()
                rec = json.loads(line) if line.startswith("{") else {}
                if rec.get("type") == "signal" and rec.get("chart") == "individuals":
                    delays.append(time.perf_counter() - t)
                    break
            time.sleep(0.02)
    proc.send_signal(signal.SIGTERM)
    proc.communicate(timeout=60)
    d = np.array(delays) * 1000
    return float(np.percentile(d, 50)), float(np.percentile(d, 95))


def idle(tmp: Path, seconds: float = 10.0, files: int = 10) -> float:
    folder = tmp / f"idle-{files}"
    folder.mkdir()
    for k in range(files):
        (folder / f"quiet{k}.csv").write_text("od\n10.0\n10.1\n9.9\n")
    proc = start([str(folder / "quiet*.csv"), "--state-dir", str(folder / "state")])
    time.sleep(3)
    before = _cpu(proc.pid)
    time.sleep(seconds)
    used = _cpu(proc.pid) - before
    proc.send_signal(signal.SIGTERM)
    proc.communicate(timeout=60)
    return 100.0 * used / seconds


def _cpu(pid: int) -> float:
    fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 300_000
    with tempfile.TemporaryDirectory() as t:
        tmp = Path(t)
        print(f"throughput, long layout: {throughput(tmp, rows, 'long'):,.0f} rows/s "
              f"({rows} rows of one value, 20 characteristics, western-electric)")
        wide = rows // 20
        print(f"throughput, wide layout: {throughput(tmp, wide, 'wide'):,.0f} rows/s "
              f"({wide} rows of 20 values)")
        p50, p95 = latency(tmp)
        print(f"write-to-signal latency: p50 {p50:.1f} ms, p95 {p95:.1f} ms")
        print(f"idle CPU: {idle(tmp):.2f}% of one core")
        print(f"idle CPU, 300 quiet files: {idle(tmp, files=300):.2f}% of one core")


if __name__ == "__main__":
    main()
