"""Second peer for bench_check.py, written from the job rather than from linewatch's code: what
an engineer with pandas would write to chart a finished log.

Read the CSV with pandas.read_csv, take individuals / moving-range limits from a baseline
(Phase I; every row unless a baseline length is given), evaluate the eight Nelson rules with
pandas rolling windows, the beyond-limits test on the moving-range chart, and write the limits,
one JSON line per signal and a short summary.

    python tests/benchmarks/pandas_plain.py LOG [COLUMN [BASELINE]] [--only-column]

By default it reads the whole CSV, as the plain `pd.read_csv(path)` does; `--only-column`
reads just the charted column (`usecols`), the first thing one would tune.

Constants d2 = 1.128 and D4 = 3.267 for moving ranges of two, as printed in the usual tables of
control chart constants (e.g. Montgomery, Introduction to Statistical Quality Control,
Appendix VI).
"""

import json
import sys

import numpy as np
import pandas as pd

D2, D4 = 1.128, 3.267


def run_of(flags: pd.Series, length: int) -> pd.Series:
    """True where the last `length` flags are all set."""
    return flags.astype(int).rolling(length).sum() == length


def main() -> None:
    args = [a for a in sys.argv[1:] if a != "--only-column"]
    path = args[0]
    column = args[1] if len(args) > 1 else "reading"
    baseline = int(args[2]) if len(args) > 2 else None

    only = "--only-column" in sys.argv
    df = pd.read_csv(path, usecols=[column]) if only else pd.read_csv(path)
    x = df[column].astype(float)
    mr = x.diff().abs()
    base_x = x if baseline is None else x.iloc[:baseline]
    base_mr = mr if baseline is None else mr.iloc[:baseline]
    center = base_x.mean()
    mr_bar = base_mr.mean()
    sigma = mr_bar / D2
    limits = [
        {"type": "limits", "chart": "individuals", "center": center,
         "ucl": center + 3 * sigma, "lcl": center - 3 * sigma, "sigma": sigma},
        {"type": "limits", "chart": "moving-range", "center": mr_bar, "ucl": D4 * mr_bar,
         "lcl": 0.0},
    ]

    z = (x - center) / sigma
    up, down = z > 0, z < 0
    step = x.diff()
    rising, falling = step > 0, step < 0
    turns = (np.sign(step) * np.sign(step.shift(1))) < 0
    a2, b2 = z > 2, z < -2
    a1, b1 = z > 1, z < -1
    out1 = z.abs() > 1
    rules = {
        "n1": z.abs() > 3,
        "n2": run_of(up, 9) | run_of(down, 9),
        "n3": run_of(rising, 5) | run_of(falling, 5),
        "n4": run_of(turns, 12),
        "n5": (a2 & (a2.astype(int).rolling(3, min_periods=1).sum() >= 2))
        | (b2 & (b2.astype(int).rolling(3, min_periods=1).sum() >= 2)),
        "n6": (a1 & (a1.astype(int).rolling(5, min_periods=1).sum() >= 4))
        | (b1 & (b1.astype(int).rolling(5, min_periods=1).sum() >= 4)),
        "n7": run_of(z.abs() <= 1, 15),
        "n8": run_of(out1, 8)
        & (a1.astype(int).rolling(8).sum() > 0)
        & (b1.astype(int).rolling(8).sum() > 0),
    }
    frames = [
        pd.DataFrame({"type": "signal", "chart": "individuals", "rule": rule,
                      "index": np.flatnonzero(fired.to_numpy()),
                      "value": x[fired].to_numpy()})
        for rule, fired in rules.items()
    ]
    mr_fired = mr > D4 * mr_bar
    frames.append(pd.DataFrame({"type": "signal", "chart": "moving-range", "rule": "n1",
                                "index": np.flatnonzero(mr_fired.to_numpy()),
                                "value": mr[mr_fired].to_numpy()}))
    signals = pd.concat(frames).sort_values(["index", "chart", "rule"], kind="stable")
    signals["line"] = signals["index"] + 2  # after the header line

    w = sys.stdout.write
    for record in limits:
        w(json.dumps(record) + "\n")
    signals.to_json(sys.stdout, orient="records", lines=True)
    d = x.describe()
    w(json.dumps({"type": "summary", "points": int(d["count"]), "mean": d["mean"],
                  "stdev": d["std"], "min": d["min"], "q1": d["25%"], "median": d["50%"],
                  "q3": d["75%"], "max": d["max"], "signals": len(signals)}) + "\n")


if __name__ == "__main__":
    main()
