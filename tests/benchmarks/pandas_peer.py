"""The peer for bench_check.py: a straightforward pandas script doing check's job (Phase I
individuals limits, the eight Nelson rules with rolling windows, one JSON line per signal).

    python tests/benchmarks/pandas_peer.py LOG
"""

import json
import sys

import numpy as np
import pandas as pd


def main() -> None:
    df = pd.read_csv(sys.argv[1])
    x = df["reading"].to_numpy(float)
    mr = np.abs(np.diff(x))
    cl = x.mean()
    s = mr.mean() / 1.128
    z = pd.Series((x - cl) / s)
    side = np.sign(z)
    up, dn = (side > 0).astype(int), (side < 0).astype(int)
    d = np.sign(pd.Series(x).diff())
    rising, falling = (d > 0).astype(int), (d < 0).astype(int)
    alt = (d * d.shift(1) < 0).astype(int)
    b2u, b2d = (z > 2).astype(int), (z < -2).astype(int)
    b1u, b1d = (z > 1).astype(int), (z < -1).astype(int)
    out = [
        z.abs() > 3,
        (up.rolling(9).sum() == 9) | (dn.rolling(9).sum() == 9),
        (rising.rolling(5).sum() == 5) | (falling.rolling(5).sum() == 5),
        alt.rolling(12).sum() == 12,
        ((b2u.rolling(3, min_periods=1).sum() >= 2) & (z > 2))
        | ((b2d.rolling(3, min_periods=1).sum() >= 2) & (z < -2)),
        ((b1u.rolling(5, min_periods=1).sum() >= 4) & (z > 1))
        | ((b1d.rolling(5, min_periods=1).sum() >= 4) & (z < -1)),
        (z.abs() <= 1).astype(int).rolling(15).sum() == 15,
        ((z.abs() > 1).astype(int).rolling(8).sum() == 8)
        & (b1u.rolling(8).sum() > 0)
        & (b1d.rolling(8).sum() > 0),
    ]
    w = sys.stdout.write
    for k, fired in enumerate(out, 1):
        for i in np.flatnonzero(fired.to_numpy()):
            rec = {"type": "signal", "rule": f"n{k}", "index": int(i), "value": float(x[i])}
            w(json.dumps(rec) + "\n")


if __name__ == "__main__":
    main()
