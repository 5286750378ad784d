"""Benchmark (run on demand, not collected by pytest): the detection-power table.

    python tests/benchmarks/bench_power.py

Times, in a fresh process each, the ARL at the six standard shifts for rule sets that take each
method: the exact zone chain, the Brook & Evans and Lucas & Saccucci chains, and simulations
(order rules, detectors with other rules, a CUSUM head start). "cold" includes the imports;
"warm" repeats the table with every cache cleared. Linear algebra timings vary with BLAS threads
on a busy machine (OPENBLAS_NUM_THREADS=1 steadies them).
"""

from __future__ import annotations

import subprocess
import sys

SNIPPET = """
import time
t0 = time.perf_counter()
from linewatch.engine.budget.power import clear_caches, detection_power
from linewatch.engine.rulebook import parse_rule_list, resolve_detectors, resolve_rules
ids = parse_rule_list({rules!r})
rules, dets = resolve_rules(ids), resolve_detectors(ids, {options!r})
table = detection_power(rules, dets)
t1 = time.perf_counter()
clear_caches()
detection_power(rules, dets)
t2 = time.perf_counter()
arls = " ".join(f"{{p.arl:7.2f}}" for p in table)
print(f"{{table[1].method:<26}} {{arls}}  cold {{t1 - t0:6.3f}} s  warm {{t2 - t1:6.3f}} s")
"""

CASES = [
    ("western-electric", {}),
    ("nelson", {}),
    ("cusum", {}),
    ("ewma", {}),
    ("ewma", {"ewma": {"lambda": 0.05, "width": 2.6}}),
    ("cusum", {"cusum": {"headstart": 2.5}}),
    ("western-electric,ewma,cusum", {}),
    ("nelson,ewma,cusum", {}),
]


def main() -> None:
    print(f"{'set':<32} {'method':<26} ARL at 0, 0.5, 1, 1.5, 2, 3σ")
    for rules, options in CASES:
        code = SNIPPET.format(rules=rules, options=options)
        out = subprocess.run(
            [sys.executable, "-c", code], capture_output=True, text=True, check=True
        )
        label = rules + (f" {options}" if options else "")
        print(f"{label[:32]:<32} {out.stdout.strip()}")


if __name__ == "__main__":
    main()
