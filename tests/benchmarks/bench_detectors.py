"""Benchmark (run on demand, not collected by pytest): EWMA and CUSUM over a long history.

    python tests/benchmarks/bench_detectors.py [points]

Times the vectorised scan of each detector over a million standardised points (default) against
the vectorised evaluation of all Nelson rules on the same points, and the point-by-point live
path on a tenth of them; the best of three runs each.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from linewatch.engine.detectors import detect
from linewatch.engine.rulebook import CusumSpec, EwmaSpec, parse_rule_list, resolve_rules
from linewatch.engine.rules import classify, evaluate_classified


def best(fn, repeats: int = 3) -> float:
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000
    z = np.random.default_rng(1).standard_normal(n)
    specs = resolve_rules(parse_rule_list("nelson"))

    def nelson() -> None:
        side, level = classify(z, 0.0, 1.0)
        for s in specs:
            evaluate_classified(s, z, side, level)

    print(f"{n:,} points")
    print(f"  nelson rules (vectorised)    {best(nelson):7.3f} s")
    for spec in (EwmaSpec(), EwmaSpec(0.05, 2.6), CusumSpec()):
        label = f"{spec.id} {spec.describe().split(')')[0].split('(')[1]}"
        print(f"  {label:<28} {best(lambda s=spec: detect.run(s, z)):7.3f} s")
    part = z[: n // 10].tolist()
    for spec in (EwmaSpec(), CusumSpec()):
        def live(s=spec) -> None:
            state = detect.new_state(s)
            for v in part:
                detect.push_point(s, v, state)
        print(f"  {spec.id} point by point ({len(part):,})  {best(live, 1):7.3f} s")


if __name__ == "__main__":
    main()
