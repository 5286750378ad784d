"""Benchmark (run on demand, not collected by pytest): `linewatch check` end to end on a
1,000,000-row log with all eight Nelson rules, side by side with a straightforward pandas script
doing the same job, plus `linewatch --help` start-up.

    pip install pandas && python tests/benchmarks/bench_check.py [ROWS]
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

PEER = Path(__file__).with_name("pandas_peer.py")


def make_log(path: Path, rows: int) -> None:
    import numpy as np

    rng = np.random.default_rng(1)
    x = rng.normal(25.0, 0.02, rows)
    t0 = np.datetime64("2026-01-05T06:00:00")
    stamps = (t0 + np.arange(rows) * np.timedelta64(1, "s")).astype(str)
    with path.open("w") as f:
        f.write("time,part,reading\n")
        rows = enumerate(zip(stamps, x, strict=True))
        f.writelines(f"{s},P{i:07d},{v:.4f}\n" for i, (s, v) in rows)


def timed(cmd: list[str]) -> tuple[float, float]:
    before = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    t = time.perf_counter()
    subprocess.run(cmd, stdout=subprocess.DEVNULL, check=False)
    elapsed = time.perf_counter() - t
    peak = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss
    return elapsed, max(peak, before) / 1024


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "big.csv"
        make_log(log, rows)
        peer = PEER
        size = os.path.getsize(log) / 1e6
        ours = [sys.executable, "-m", "linewatch", "check", str(log), "--column", "reading",
                "--rules", "nelson", "--format", "jsonl"]
        best_ours = min(timed(ours)[0] for _ in range(3))
        _, ours_mem = timed(ours)
        best_peer = min(timed([sys.executable, str(peer), str(log)])[0] for _ in range(3))
        helps = min(timed([sys.executable, "-m", "linewatch", "--help"])[0] for _ in range(5))
        print(f"log: {rows} rows, {size:.1f} MB")
        print(f"linewatch check (nelson, jsonl): {best_ours:.2f} s, peak RSS {ours_mem:.0f} MB")
        print(f"pandas peer:                     {best_peer:.2f} s")
        print(f"ratio: {best_ours / best_peer:.2f} of the peer's time")
        print(f"linewatch --help:                {helps:.3f} s")


if __name__ == "__main__":
    main()
