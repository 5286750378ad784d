"""Benchmark (run on demand, not collected by pytest): the feed layer on its own.

    python tests/benchmarks/bench_feeds.py [ROWS [STREAM_ROWS]]

- read_log on a ROWS-row log (ISO timestamp, part id, one reading; default 1,000,000 ≈ 37 MB):
  best of three, and peak memory of a fresh process doing it once;
- the tailer's sustained rate on a 20-characteristic wide log appended in blocks, and its
  resident memory while STREAM_ROWS rows (default 2,000,000) stream through;
- latency from a row's write to the tailer handing it out, woken by the real waker (p50/p95);
- idle CPU of a waker plus tailer following 10 quiet files for 5 s, driven like the monitor.
"""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

from linewatch.config.model import FeedConfig
from linewatch.feeds.tailer import Tailer
from linewatch.feeds.watcher import Waker
from linewatch.feeds.whole_file import read_log


def make_log(path: Path, rows: int) -> None:
    import numpy as np

    rng = np.random.default_rng(1)
    vals = rng.normal(12.0, 0.02, rows)
    with open(path, "w") as fh:
        fh.write("timestamp,part,reading\n")
        block = 100_000
        for lo in range(0, rows, block):
            fh.write("".join(
                f"2026-03-02T{(k // 3600) % 24:02d}:{(k // 60) % 60:02d}:{k % 60:02d}.000,"
                f"T-{k:07d},{vals[k]:.4f}\n"
                for k in range(lo, min(rows, lo + block))
            ))


def bench_read_log(folder: Path, rows: int) -> None:
    log = folder / "big.csv"
    make_log(log, rows)
    feed = FeedConfig(paths=[])
    best = min(_timed(lambda: read_log(str(log), feed)) for _ in range(3))
    code = (
        "import resource, sys\n"
        "from linewatch.config.model import FeedConfig\n"
        "from linewatch.feeds.whole_file import read_log\n"
        "read_log(sys.argv[1], FeedConfig(paths=[]))\n"
        "print(resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)\n"
    )
    out = subprocess.run([sys.executable, "-c", code, str(log)], capture_output=True, text=True,
                         check=True)
    peak = int(out.stdout.strip()) / 1024
    size = log.stat().st_size / 1e6
    print(f"read_log: {rows:,} rows, {size:.1f} MB: best {best:.3f} s "
          f"({rows / best / 1e6:.1f} M rows/s); peak RSS of a fresh process {peak:.0f} MB")


def _timed(fn) -> float:
    t = time.perf_counter()
    fn()
    return time.perf_counter() - t


def bench_tail_rate(folder: Path, rows: int = 200_000, columns: int = 20) -> None:
    log = folder / "wide.csv"
    names = [f"c{k:02d}" for k in range(columns)]
    log.write_text("time," + ",".join(names) + "\n")
    line = "2026-03-02T06:00:00," + ",".join(f"{25 + k / 7:.3f}" for k in range(columns)) + "\n"
    block = line * 5000
    t = Tailer([FeedConfig(paths=[str(log)])])
    t.poll()
    got = 0
    start = time.perf_counter()
    for _ in range(rows // 5000):
        with open(log, "a") as fh:
            fh.write(block)
        for c in t.poll():
            if c.batch is not None:
                got += c.batch.rows
    elapsed = time.perf_counter() - start
    t.close()
    print(f"tailer: {got:,} rows x {columns} characteristics in {elapsed:.2f} s "
          f"= {got / elapsed:,.0f} rows/s ({got * columns / elapsed:,.0f} values/s)")


def bench_tail_memory(folder: Path, rows: int) -> None:
    """Resident memory while `rows` rows stream through the tailer: it must stay flat."""
    import psutil

    log = folder / "stream.csv"
    names = [f"c{k:02d}" for k in range(20)]
    log.write_text("time," + ",".join(names) + "\n")
    line = "2026-03-02T06:00:00," + ",".join(f"{25 + k / 7:.3f}" for k in range(20)) + "\n"
    block = line * 10_000
    t = Tailer([FeedConfig(paths=[str(log)])])
    proc = psutil.Process()
    marks: list[float] = []
    got = 0
    for k in range(rows // 10_000):
        with open(log, "a") as fh:
            fh.write(block)
        for c in t.poll():
            if c.batch is not None:
                got += c.batch.rows
        if k % max(1, rows // 10_000 // 5) == 0:
            marks.append(proc.memory_info().rss / 2**20)
        if k % 50 == 49:  # keep the disk use small: the writer truncates, as logrotate would
            with open(log, "r+") as fh:
                fh.truncate(0)
            t.poll()
            with open(log, "a") as fh:
                fh.write("time," + ",".join(names) + "\n")
    t.close()
    shown = ", ".join(f"{m:.0f}" for m in marks)
    print(f"tailer memory: {got:,} rows streamed; RSS MB along the way: {shown}")


def bench_latency(folder: Path, samples: int = 200) -> None:
    log = folder / "live.csv"
    log.write_text("time,od\n")
    t = Tailer([FeedConfig(paths=[str(log)])])
    w = Waker(t.patterns)
    t.poll()
    delays: list[float] = []
    for k in range(samples):
        written = time.perf_counter()
        with open(log, "a") as fh:
            fh.write(f"06:00:{k % 60:02d},{25 + k / 1000:.3f}\n")
        while True:
            if any(c.batch is not None and c.batch.rows for c in t.poll()):
                delays.append(time.perf_counter() - written)
                break
            w.wait(1.0)
        time.sleep(0.005)
    w.close()
    t.close()
    q = statistics.quantiles(delays, n=20)
    print(f"write -> row handed out: p50 {statistics.median(delays) * 1e3:.2f} ms, "
          f"p95 {q[18] * 1e3:.2f} ms over {samples} rows (waker mode: events)")


def bench_idle(folder: Path, seconds: float = 5.0) -> None:
    for k in range(10):
        (folder / f"quiet{k}.csv").write_text("time,od\n06:00,25.0\n")
    t = Tailer([FeedConfig(paths=[str(folder / "quiet*.csv")])])
    w = Waker(t.patterns)
    stop = time.monotonic() + seconds
    t.poll()
    cpu0 = resource.getrusage(resource.RUSAGE_SELF)
    while time.monotonic() < stop:
        if not t.poll():
            w.wait(0.5)
    cpu1 = resource.getrusage(resource.RUSAGE_SELF)
    used = (cpu1.ru_utime - cpu0.ru_utime) + (cpu1.ru_stime - cpu0.ru_stime)
    w.close()
    t.close()
    print(f"idle: 10 quiet files for {seconds:.0f} s: {used / seconds * 100:.2f}% of one core "
          f"(threads: {threading.active_count()})")


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        bench_read_log(folder, rows)
        bench_tail_rate(folder)
        bench_tail_memory(folder, int(sys.argv[2]) if len(sys.argv) > 2 else 2_000_000)
        bench_latency(folder)
        idle = folder / "idle"
        idle.mkdir()
        bench_idle(idle)
    print(f"python {sys.version.split()[0]}, {os.cpu_count()} cpus")


if __name__ == "__main__":
    main()
