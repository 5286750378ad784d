"""Plant forwarding under load: N lines (default 30) x 20 characteristics x 10 rows/s, each a
real `linewatch watch` collector, forwarding to one PostgreSQL server on this machine (a
throwaway cluster with fsync on).

Reports, for a run with forwarding and one without:
- write-to-signal: a row far beyond the limits appended to a probe line's log, to its signal
  record on the collector's stdout (p50, p95), on 5 probe lines once a second each;
- backlog: outbox entries a line committed that the central database has not applied yet,
  the worst line, sampled every second (max over the run, max over its last third: bounded
  means the second does not grow with the run);
- CPU seconds used per collector process (the steadiest figure on a busy machine);
- acknowledgement to central: an alarm acknowledged on a line (the shell command's code, in
  this process) until the central database shows it acknowledged (p50, p95).

    python tests/benchmarks/bench_plant.py [--lines 30] [--seconds 60] [--no-baseline-run]
"""

from __future__ import annotations

import argparse
import json
import os
import sqlite3
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from tests.pg_server import Cluster, wait_ready, with_database

CHARS = 20
RATE = 10.0  # rows per second per line
PROBES = 5
BASELINE = 30


def _row(rng: np.random.Generator, spike: bool) -> str:
    values = rng.normal(10.0, 0.1, CHARS)
    if spike:
        values[0] = 10.0 + 20 * 0.1  # 20 sigma above: beyond the limits whatever they are
    return ",".join(f"{v:.4f}" for v in values) + "\n"


class Probe:
    """Reads a collector's stdout, timing the signal records of its first characteristic."""

    def __init__(self, proc: subprocess.Popen[str]) -> None:
        self.seen: dict[int, float] = {}
        self._t = threading.Thread(target=self._pump, args=(proc,), daemon=True)
        self._t.start()

    def _pump(self, proc: subprocess.Popen[str]) -> None:
        assert proc.stdout is not None
        for line in proc.stdout:
            if '"signal"' in line:
                rec = json.loads(line)
                if rec.get("characteristic") == "c01" and rec.get("chart") == "individuals":
                    self.seen.setdefault(int(rec["index"]), time.perf_counter())


def _newest(db: Path) -> int:
    """The line's newest outbox entry."""
    con = sqlite3.connect(f"file:{db}?mode=ro", uri=True, timeout=5)
    try:
        return int(con.execute("SELECT seq FROM sqlite_sequence WHERE name = 'outbox'")
                   .fetchone()[0])
    except (sqlite3.OperationalError, TypeError):
        return 0
    finally:
        con.close()


def run(tmp: Path, lines: int, seconds: float, url: str | None) -> dict[str, object]:
    header = ",".join(f"c{i + 1:02d}" for i in range(CHARS)) + "\n"
    rng = np.random.default_rng(7)
    folders = []
    procs: list[subprocess.Popen[str]] = []
    for k in range(lines):
        folder = tmp / f"{'fwd' if url else 'plain'}-{k:02d}"
        folder.mkdir()
        (folder / "line.csv").write_text(header + "".join(_row(rng, False)
                                                          for _ in range(BASELINE)))
        plant = f'[plant]\nurl = "{url}"\nline = "line-{k:02d}"\n' if url else ""
        (folder / "line.toml").write_text(
            f'[monitor]\nbaseline = {BASELINE}\nstate_dir = "state"\n{plant}'
            '[[feed]]\npaths = ["line.csv"]\n'
            + "".join(f'[[characteristic]]\nname = "c{i + 1:02d}"\ncolumn = "c{i + 1:02d}"\n'
                      'rules = ["we1"]\n' for i in range(CHARS)))
        folders.append(folder)
        procs.append(subprocess.Popen(
            [sys.executable, "-m", "linewatch", "watch", "-c", str(folder / "line.toml"),
             "--no-ui", "--format", "jsonl"],
            stdout=subprocess.PIPE if k < PROBES else subprocess.DEVNULL,
            stderr=subprocess.DEVNULL, text=True, env={**os.environ, "PYTHONUNBUFFERED": "1"}))
    probes = [Probe(p) for p in procs[:PROBES]]
    dbs = [f / "state" / "linewatch.db" for f in folders]
    deadline = time.monotonic() + 180
    while not all(d.exists() for d in dbs) and time.monotonic() < deadline:
        time.sleep(0.2)
    time.sleep(5)  # every collector has read its baseline
    written = [BASELINE] * lines
    spikes: list[tuple[int, int, float]] = []  # (probe, index, written at)
    backlog: list[tuple[float, int]] = []
    acks: list[float] = []
    stop = threading.Event()

    def sample() -> None:
        """Entries committed on a line and not yet applied centrally, the worst line."""
        if not url:
            return
        import psycopg

        with psycopg.connect(url, autocommit=True) as central:
            while not stop.wait(1.0):
                applied = dict(central.execute(
                    "SELECT plant_line, forwarded_seq FROM linewatch.lines").fetchall())
                worst = max(_newest(d) - applied.get(f"line-{k:02d}", 0)
                            for k, d in enumerate(dbs))
                backlog.append((time.monotonic(), worst))

    def ack_loop() -> None:
        import psycopg

        from linewatch.alarms.book import AlarmBook
        from linewatch.store.db import Store

        central = psycopg.connect(url, autocommit=True)
        k = 0
        while not stop.wait(1.5):
            folder = folders[k % PROBES]
            k += 1
            with Store(folder / "state") as store:
                book = AlarmBook(store)
                open_ = [a for a in book.alarms() if not a.acknowledged and a.closed_at is None]
                if not open_:
                    continue
                t0 = time.perf_counter()
                book.acknowledge([open_[0].id], "1", "bench")
            line = f"line-{(k - 1) % PROBES:02d}"
            while time.perf_counter() - t0 < 30:
                row = central.execute(
                    "SELECT acknowledged FROM linewatch.alarms WHERE plant_line = %s AND id = %s",
                    (line, open_[0].id)).fetchone()
                if row and row[0]:
                    acks.append(time.perf_counter() - t0)
                    break
                time.sleep(0.01)
        central.close()

    helpers = [threading.Thread(target=sample, daemon=True)]
    if url:
        helpers.append(threading.Thread(target=ack_loop, daemon=True))
    for h in helpers:
        h.start()
    handles = [(f / "line.csv").open("a") for f in folders]
    start = time.monotonic()
    tick = 0
    while time.monotonic() - start < seconds:
        tick += 1
        for k, h in enumerate(handles):
            spike = k < PROBES and tick % 10 == k * 2  # once a second per probe, staggered
            h.write(_row(rng, spike))
            h.flush()
            if spike:
                spikes.append((k, written[k], time.perf_counter()))
            written[k] += 1
        next_at = start + tick / RATE
        time.sleep(max(0.0, next_at - time.monotonic()))
    for h in handles:
        h.close()
    time.sleep(3)
    import psutil

    cpu = sum(sum(psutil.Process(p.pid).cpu_times()[:2]) for p in procs)
    stop.set()
    for h in helpers:
        h.join(40)
    for p in procs:
        p.terminate()
    for p in procs:
        p.wait(120)
    delays = [probes[k].seen[i] - t for k, i, t in spikes if i in probes[k].seen]
    d = np.array(delays) * 1000
    third = [b for t, b in backlog if t >= start + 2 * seconds / 3]
    return {
        "signals": f"{len(delays)}/{len(spikes)}",
        "collector_cpu_s_per_line": cpu / lines,
        "p50_ms": float(np.percentile(d, 50)) if len(d) else float("nan"),
        "p95_ms": float(np.percentile(d, 95)) if len(d) else float("nan"),
        "backlog_max": max((b for _, b in backlog), default=0),
        "backlog_last_third_max": max(third, default=0),
        "ack_n": len(acks),
        "ack_p50_ms": float(np.percentile(np.array(acks) * 1000, 50)) if acks else None,
        "ack_p95_ms": float(np.percentile(np.array(acks) * 1000, 95)) if acks else None,
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--lines", type=int, default=30)
    ap.add_argument("--seconds", type=float, default=60)
    ap.add_argument("--no-baseline-run", action="store_true",
                    help="skip the run without forwarding")
    args = ap.parse_args()
    cluster = Cluster.create(durable=True)
    cluster.start()
    try:
        wait_ready(cluster.url)
        import psycopg

        from linewatch.plant.central import migrate

        with psycopg.connect(cluster.url, autocommit=True) as conn:
            conn.execute("CREATE DATABASE plant")
        url = with_database(cluster.url, "plant")
        with psycopg.connect(url) as conn:
            migrate(conn)
        print(f"load average before: {os.getloadavg()[0]:.1f}")
        with tempfile.TemporaryDirectory() as tmp:
            if not args.no_baseline_run:
                plain = run(Path(tmp), args.lines, args.seconds, None)
                print("without forwarding:", json.dumps(plain))
            fwd = run(Path(tmp), args.lines, args.seconds, url)
            print("with forwarding:   ", json.dumps(fwd))
        print(f"load average after: {os.getloadavg()[0]:.1f}")
    finally:
        cluster.remove()


if __name__ == "__main__":
    main()
