"""Benchmark (run on demand, not collected by pytest): `linewatch check` on the 1,000,000-row
log of bench_check.py with all eight Nelson rules, with and without `ewma,cusum` added, and
the detection-power table of that set from cold caches.

    python tests/benchmarks/bench_check_detectors.py [ROWS [ROUNDS]]

The two commands run in turns, ROUNDS times (default 7) after one warm-up each, so a busy
machine disturbs both alike; the best and the median wall time of each are printed with their
ratio (the target: within 10%)."""

from __future__ import annotations

import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))
from bench_check import make_log, run


def power_table_seconds() -> float:
    from linewatch.engine.budget.power import clear_caches
    from linewatch.engine.rulebook import parse_rule_list, resolve_detectors, resolve_rules
    from linewatch.present import power_cache
    from linewatch.present.power_table import power_table

    ids = parse_rule_list("nelson,ewma,cusum")
    clear_caches()
    os.environ["XDG_CACHE_HOME"] = tempfile.mkdtemp()  # the file cache empty too
    power_cache._loaded = None
    t = time.perf_counter()
    power_table("nelson,ewma,cusum", resolve_rules(ids), resolve_detectors(ids), 5)
    return time.perf_counter() - t


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    rounds = int(sys.argv[2]) if len(sys.argv) > 2 else 7
    env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
    py = sys.executable
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "big.csv"
        make_log(log, rows)
        base = [py, "-m", "linewatch", "check", str(log), "--column", "reading",
                "--format", "jsonl", "--rules"]
        cmds = {"nelson": [*base, "nelson"], "nelson,ewma,cusum": [*base, "nelson,ewma,cusum"]}
        for cmd in cmds.values():
            run(cmd, env)
        walls: dict[str, list[float]] = {name: [] for name in cmds}
        cpus: dict[str, list[float]] = {name: [] for name in cmds}
        for _ in range(rounds):
            for name, cmd in cmds.items():
                wall, cpu, _out = run(cmd, env)
                walls[name].append(wall)
                cpus[name].append(cpu)
    print(f"log: {rows} rows; {rounds} interleaved rounds (seconds; the power table's simulated "
          "figures come from the file cache after the warm-up)")
    for name in cmds:
        w, c = walls[name], cpus[name]
        print(f"  {name:20s} wall best {min(w):6.2f} median {statistics.median(w):6.2f}   "
              f"CPU best {min(c):6.2f} median {statistics.median(c):6.2f}")
    for what, d in (("wall", walls), ("CPU", cpus)):
        a, b = d["nelson"], d["nelson,ewma,cusum"]
        print(f"  {what} ratio with/without: best {min(b) / min(a):.3f}  median "
              f"{statistics.median(b) / statistics.median(a):.3f} (target at most 1.10)")
    print(f"power table of nelson,ewma,cusum (n = 5, both shift rows), cold: "
          f"{power_table_seconds():.2f} s (target under 1 s)")


if __name__ == "__main__":
    main()
