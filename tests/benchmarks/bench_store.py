"""Store write throughput as the monitor uses it: per batch one transaction holding the file
offset, every characteristic's points and engine state, and the alarm bookkeeping.

Run on demand: `python tests/benchmarks/bench_store.py [ROWS] [BATCH]`. Prints rows per second
for synchronous=FULL (the store's setting) and, for comparison, NORMAL.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

from linewatch.alarms.book import AlarmBook
from linewatch.domain.records import FileState
from linewatch.store.db import Store

CHARACTERISTICS = 20


def run(rows: int, batch: int, synchronous: str) -> float:
    with tempfile.TemporaryDirectory() as tmp, Store(Path(tmp) / "s") as store:
        store.execute(f"PRAGMA synchronous = {synchronous}")
        book = AlarmBook(store)
        per_char = batch // CHARACTERISTICS
        values = [25.0 + 0.01 * (k % 7) for k in range(per_char)]
        lines = list(range(1, per_char + 1))
        done = 0
        index = 0
        start = time.perf_counter()
        while done < rows:
            with store.transaction():
                for c in range(CHARACTERISTICS):
                    name = f"c{c}"
                    store.history.add_points(name, index, values, lines, "/logs/line.csv")
                    store.ingest.save_engine(name, '{"tail": [1, 2, 3]}')
                    fired = {"we1": [index]} if index % 5000 == 0 else {}
                    book.observe_chart(name, "individuals", index, index + per_char - 1, fired)
                store.ingest.save_file(
                    FileState("/logs/line.csv", 1, 2, "64:ab", done * 40, done + 1)
                )
            index += per_char
            done += per_char * CHARACTERISTICS
        return done / (time.perf_counter() - start)


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 400_000
    batch = int(sys.argv[2]) if len(sys.argv) > 2 else 2_000
    for sync in ("FULL", "NORMAL"):
        print(f"synchronous={sync:<6} batch={batch}: {run(rows, batch, sync):,.0f} rows/s")


if __name__ == "__main__":
    main()
