"""The collector charts a pass/fail tester's log (one row per part, subgroups by sample id) and
a vision station's defect counts (defects and units per row) on a real file and a real store:
stepped points with their own limits, one alarm for a special cause, the open sample closed by
the clock on a beat, and a restart between polls giving what one uninterrupted run gives.

The data are test data. Expected limits are the textbook formulas (Montgomery, control charts
for attributes: p̄ ± 3√(p̄(1 − p̄)/n_i), ū ± 3√(ū/n_i)), computed here from the counts.
"""

from __future__ import annotations

import math
from pathlib import Path

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.feeds.tailer import Tailer
from linewatch.pipeline.collector import Collector
from linewatch.pipeline.plan import Characteristics, WatchPlan
from linewatch.pipeline.stepped_rows import columns_read
from linewatch.store.db import Store

NOW = 2_000_000_000.0
# failures per sample of the baseline (sizes vary: 40 + k % 3 parts), then a sample of 50
# with 20 failures: far beyond any limit near p̄ ≈ 0.05
FAILS = [2, 1, 3, 2, 2, 1, 3, 2, 2, 3, 1, 2]


def write_tester_log(path: Path, samples: list[tuple[int, int]], start: int = 0,
               header: bool = True) -> None:
    lines = ["time,sample,result\n"] if header else []
    t = 0
    for s, (n, bad) in enumerate(samples, start):
        for j in range(n):
            t += 1
            lines.append(f"2033-05-18T03:{s % 60:02d}:{j % 60:02d},S{s:03d},"
                         f"{'FAIL' if j < bad else 'PASS'}\n")
    with path.open("a") as f:
        f.writelines(lines)


class Station:
    def __init__(self, tmp_path: Path, chars: str, log: str) -> None:
        self.log = tmp_path / log
        self.state = tmp_path / "state"
        config = parse_config(f'[[feed]]\npaths = ["{self.log}"]\n' + chars)
        cs = config.characteristics
        reads = [columns_read(c) for c in cs]
        self.plan = WatchPlan(config=config, feeds=config.feeds, characteristics=cs,
                              columns=[n for r in reads for n in r[0]], baseline=len(FAILS),
                              text_columns=[t for r in reads for t in r[1]])
        self.store = Store(self.state)

    def poll(self, now: float = NOW) -> Collector:
        alarms = AlarmBook(self.store, self.plan.config)
        col = Collector(self.store, alarms, self.plan, Characteristics(self.plan))
        tailer = Tailer(self.plan.feeds, self.plan.columns, self.store.ingest.files(),
                        text_columns=self.plan.text_columns)
        col.process(tailer.poll(), now)
        tailer.close()
        return col

    def points(self, name: str, chart: str):
        return self.store.stepped.last(name, chart, 1000)


PASS_FAIL = """
[[characteristic]]
name = "tester"
column = "result"
result_column = "result"
subgroup_by = "sample"
"""


def test_a_pass_fail_log_charts_p_with_stepped_limits_and_one_alarm(tmp_path):
    st = Station(tmp_path, PASS_FAIL, "tester.csv")
    samples = [(40 + k % 3, bad) for k, bad in enumerate(FAILS)] + [(50, 20), (45, 2)]
    write_tester_log(st.log, samples)
    col = st.poll()
    pts = st.points("tester", "p")
    # the last sample is still open: no later row has closed it
    assert [p.n for p in pts] == [float(n) for n, _ in samples[:-1]]
    pbar = sum(FAILS) / sum(n for n, _ in samples[: len(FAILS)])
    for p in pts:
        assert p.center == pbar
        assert math.isclose(p.ucl, pbar + 3 * math.sqrt(pbar * (1 - pbar) / p.n), rel_tol=1e-12)
    assert pts[-1].value == 20 / 50 and pts[-1].value > pts[-1].ucl
    rows = st.store.query("SELECT chart, rule FROM alarms WHERE characteristic = 'tester'")
    assert [tuple(r) for r in rows] == [("p", "we1")]
    # the clock closes the open sample on a beat, 5 minutes (the default timeout) after its
    # last row; its time stamps are read as local time
    col.beat(NOW + 10 * 365 * 86400)
    assert [p.n for p in st.points("tester", "p")][-1] == 45.0


def test_a_restart_between_polls_gives_the_uninterrupted_run(tmp_path):
    samples = [(40 + k % 3, bad) for k, bad in enumerate(FAILS)] + [(50, 20), (45, 2), (41, 1)]
    (tmp_path / "one").mkdir()
    (tmp_path / "two").mkdir()
    one = Station(tmp_path / "one", PASS_FAIL, "tester.csv")
    write_tester_log(one.log, samples)
    one.poll()
    two = Station(tmp_path / "two", PASS_FAIL, "tester.csv")
    write_tester_log(two.log, samples[:7])
    two.poll()
    two.store.close()
    two.store = Store(two.state)  # a restart: engines rebuilt from the saved state
    write_tester_log(two.log, samples[7:], start=7, header=False)
    two.poll()
    key = [(p.index, p.value, p.n, p.center, p.ucl, p.lcl) for p in one.points("tester", "p")]
    assert [(p.index, p.value, p.n, p.center, p.ucl, p.lcl)
            for p in two.points("tester", "p")] == key
    alarms = "SELECT chart, rule, first_index FROM alarms ORDER BY id"
    assert [tuple(r) for r in two.store.query(alarms)] == [
        tuple(r) for r in one.store.query(alarms)]


def test_a_defect_count_log_charts_u_per_row(tmp_path):
    chars = """
[[characteristic]]
name = "vision"
column = "defects"
count_column = "defects"
size_column = "units"
chart = "u"
"""
    st = Station(tmp_path, chars, "vision.csv")
    counts = [(2, 100), (1, 80), (3, 120), (2, 100), (1, 90), (2, 110), (3, 100), (2, 95),
              (1, 105), (2, 100), (3, 100), (2, 100), (19, 100)]
    st.log.write_text("time,defects,units\n" + "".join(
        f"2033-05-18T04:{k:02d}:00,{d},{u}\n" for k, (d, u) in enumerate(counts)))
    st.poll()
    pts = st.points("vision", "u")
    base = counts[: len(FAILS)]
    ubar = sum(d for d, _ in base) / sum(u for _, u in base)
    assert [p.n for p in pts] == [float(u) for _, u in counts]
    assert all(math.isclose(p.ucl, ubar + 3 * math.sqrt(ubar / p.n), rel_tol=1e-12) for p in pts)
    rows = st.store.query("SELECT chart, rule FROM alarms WHERE characteristic = 'vision'")
    assert [tuple(r) for r in rows] == [("u", "we1")]
