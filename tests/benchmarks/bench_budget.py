"""Benchmark (run on demand, not collected by pytest): the false-alarm budget.

    python tests/benchmarks/bench_budget.py

Times, in a fresh process each, the exact chain for `western-electric` and for `nelson` without
the trend and alternation rules, the full `nelson` set (its simulated ARL is stored), and a fresh
seeded simulation of that set. "cold" includes the lazy imports; "warm" repeats the computation
with the cache cleared. Linear algebra timings vary with BLAS threads on a busy machine
(OPENBLAS_NUM_THREADS=1 steadies them).
"""

from __future__ import annotations

import subprocess
import sys

SNIPPET = """
import time
t0 = time.perf_counter()
from linewatch.engine.budget import rates, simulation
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
specs = [s for s in resolve_rules(parse_rule_list({rules!r})) if s.id not in {drop!r}]
run = simulation.simulate_run_length if {fresh!r} else rates.average_run_length
r = run(specs)
t1 = time.perf_counter()
rates.clear_caches()
run(specs)
t2 = time.perf_counter()
print(f"{{r.method:<26}} ARL {{r.arl:10.2f}}  cold {{t1 - t0:6.3f}} s  warm {{t2 - t1:6.3f}} s")
"""

CASES = [
    ("western-electric", (), False),
    ("nelson", ("n3", "n4"), False),
    ("nelson", (), False),
    ("nelson", (), True),
]


def main() -> None:
    for rules, drop, fresh in CASES:
        code = SNIPPET.format(rules=rules, drop=set(drop), fresh=fresh)
        out = subprocess.run(
            [sys.executable, "-c", code], capture_output=True, text=True, check=True
        )
        label = rules + (f" without {', '.join(drop)}" if drop else "")
        label += " (fresh simulation)" if fresh else ""
        print(f"{label:<28} {out.stdout.strip()}")


if __name__ == "__main__":
    main()
