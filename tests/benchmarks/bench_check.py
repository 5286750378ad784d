"""Benchmark (run on demand, not collected by pytest): `linewatch check` end to end on a
1,000,000-row log with all eight Nelson rules, side by side in one run with pandas scripts doing
the same job, plus `linewatch --help` start-up.

    pip install -e '.[test,bench]' && python tests/benchmarks/bench_check.py [ROWS [ROUNDS]]

The peers: pandas_peer.py (written beside linewatch's code) and pandas_plain.py (written from
the job: read_csv, limits from the baseline, rolling windows, to_json), the latter both reading
the whole CSV (plain `read_csv`) and only the charted column (`usecols`). The commands run in
turns, ROUNDS times (default 5), after one warm-up each (bytecode written, file cached); the
best wall time and the best CPU time (user + system) of each are kept, so a busy machine
disturbs every command alike. Each peer's signal count is printed beside ours: the same job.
"""

from __future__ import annotations

import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).parent


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


def run(cmd: list[str], env: dict[str, str]) -> tuple[float, float, bytes]:
    """(wall seconds, CPU seconds, stdout) of one run."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    out = subprocess.run(cmd, stdout=subprocess.PIPE, env=env, check=False).stdout
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, out


def peak_mb(cmd: list[str], env: dict[str, str]) -> float:
    code = ("import resource, subprocess, sys; subprocess.run(sys.argv[1:], "
            "stdout=subprocess.DEVNULL); "
            "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
    out = subprocess.run([sys.executable, "-c", code, *cmd], capture_output=True, text=True,
                         env=env, check=True)
    return int(out.stdout) / 1024


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 5
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "big.csv"
        make_log(log, rows)
        cmds = {
            "linewatch check": [py, "-m", "linewatch", "check", str(log), "--column", "reading",
                                "--rules", "nelson", "--format", "jsonl"],
            "pandas_peer.py": [py, str(HERE / "pandas_peer.py"), str(log)],
            "pandas_plain.py": [py, str(HERE / "pandas_plain.py"), str(log)],
            "pandas_plain.py --only-column": [py, str(HERE / "pandas_plain.py"), str(log),
                                              "--only-column"],
        }
        signals: dict[str, int] = {}
        for name, cmd in cmds.items():  # warm-up: bytecode written, the log in the page cache
            out = run(cmd, env)[2]
            signals[name] = out.count(b'"type":"signal"') + out.count(b'"type": "signal"')
        best = {name: (float("inf"), float("inf")) for name in cmds}
        for _ in range(rounds):
            for name, cmd in cmds.items():
                wall, cpu, _ = run(cmd, env)
                best[name] = (min(best[name][0], wall), min(best[name][1], cpu))
        helps = min(run([py, "-m", "linewatch", "--help"], env)[0] for _ in range(5))
        ours_mem = peak_mb(cmds["linewatch check"], env)
        size = os.path.getsize(log) / 1e6
    ours = best["linewatch check"]
    print(f"log: {rows} rows, {size:.1f} MB; best of {rounds} rounds")
    print(f"{'':32s} {'wall s':>7s} {'CPU s':>7s} {'wall ratio':>10s} {'CPU ratio':>9s}"
          f" {'signals':>8s}")
    for name, (wall, cpu) in best.items():
        ratio = "" if name == "linewatch check" else f"{ours[0] / wall:10.2f} {ours[1] / cpu:9.2f}"
        print(f"{name:32s} {wall:7.2f} {cpu:7.2f} {ratio:20s} {signals[name]:8d}")
    print("ratio: linewatch's time over the peer's (at most 0.5 is the target)")
    print(f"linewatch check peak RSS: {ours_mem:.0f} MB")
    print(f"linewatch --help: {helps:.3f} s")


if __name__ == "__main__":
    main()
