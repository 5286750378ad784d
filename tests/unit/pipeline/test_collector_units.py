"""One poll and one beat of the collector, driven without the role loop on real files and a
real store: what a unit read lands in one commit (offsets, points, engine state, alarms) or not
at all, and a new-baseline request from the shell is carried out exactly once, also across a
restart.

The series are test data; the expectation that a point 10 units above a baseline whose values
lie within 9.7..10.3 is beyond the 3-sigma limits (Western Electric test 1) is common practice.
"""

from __future__ import annotations

import sqlite3
from collections.abc import Iterator
from pathlib import Path

import numpy as np
import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.domain.errors import LeaseLost
from linewatch.feeds.tailer import Tailer
from linewatch.pipeline.collector import Collector
from linewatch.pipeline.plan import Characteristics, WatchPlan
from linewatch.store.db import DB_NAME, Store
from linewatch.store.lease import Lease

BASE = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8]
HEADER = "time,part,od\n"
NOW = 1_000_000.0


def rows(values: list[float], start: int = 0) -> str:
    return "".join(f"2026-03-02T06:00:{(start + i) % 60:02d},P{start + i},{v:.4f}\n"
                   for i, v in enumerate(values))


class Line:
    """A log, a plan that discovers its columns, and a store in a temporary directory."""

    def __init__(self, tmp_path: Path, values: list[float]) -> None:
        self.log = tmp_path / "line.csv"
        self.log.write_text(HEADER + rows(values))
        self.state = tmp_path / "state"
        config = parse_config(f'[[feed]]\npaths = ["{self.log}"]\n')
        self.plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[],
                              columns=None, baseline=20)
        self.store = Store(self.state)
        self.alarms = AlarmBook(self.store, config)

    def collector(self, **kwargs: object) -> Collector:
        return Collector(self.store, self.alarms, self.plan, Characteristics(self.plan),
                         **kwargs)  # type: ignore[arg-type]

    def tailer(self) -> Tailer:
        return Tailer(self.plan.feeds, None, self.store.ingest.files())

    def reopen(self) -> None:
        """A restart: the store closed and opened again, a new alarm book."""
        self.store.close()
        self.store = Store(self.state)
        self.alarms = AlarmBook(self.store, self.plan.config)

    def committed(self) -> dict[str, object]:
        """What another process sees in the file: offsets, points, engines, alarms."""
        con = sqlite3.connect(f"file:{self.state / DB_NAME}?mode=ro", uri=True)
        try:
            return {
                "offset": [r[0] for r in con.execute("SELECT offset FROM files")],
                "points": [r[0] for r in con.execute(
                    "SELECT value FROM points WHERE characteristic = 'od' ORDER BY idx")],
                "engines": [r[0] for r in con.execute("SELECT characteristic FROM engine_state")],
                "alarms": [tuple(r) for r in con.execute(
                    "SELECT chart, rule, first_index FROM alarms ORDER BY id")],
            }
        finally:
            con.close()


@pytest.fixture
def line(tmp_path: Path) -> Iterator[Line]:
    values = BASE * 2 + [10.0, 10.1, 9.9, 10.0, 20.0]  # 20 for the baseline, a spike at 24
    made = Line(tmp_path, values)
    yield made
    made.store.close()


def test_one_poll_commits_offsets_points_engine_state_and_alarms_together(line: Line) -> None:
    tailer = line.tailer()
    out = line.collector().process(tailer.poll(), NOW)
    tailer.close()
    seen = line.committed()
    assert seen["offset"] == [line.log.stat().st_size]
    assert seen["points"] == pytest.approx(BASE * 2 + [10.0, 10.1, 9.9, 10.0, 20.0])
    assert seen["engines"] == ["od"]
    assert ("individuals", "we1", 24) in seen["alarms"]
    assert out.values == {"od": 25} and out.rows == 25 and out.rejected == 0
    assert any(r.get("type") == "limits" for r in out.records)
    assert any(r.get("type") == "signal" and r.get("index") == 24 for r in out.records)
    assert any(ev.action == "raised" for ev in out.raised)


def test_a_fault_inside_the_poll_leaves_nothing_and_the_retry_doubles_nothing(
    line: Line,
) -> None:
    # a store fault at the poll's last writes (the alarm rows), after points were written
    line.store.execute("CREATE TRIGGER refuse BEFORE INSERT ON alarms "
                       "BEGIN SELECT RAISE(ABORT, 'disk trouble'); END")
    tailer = line.tailer()
    with pytest.raises(sqlite3.DatabaseError, match="disk trouble"):
        line.collector().process(tailer.poll(), NOW)
    tailer.close()
    assert line.committed() == {"offset": [], "points": [], "engines": [], "alarms": []}
    line.store.execute("DROP TRIGGER refuse")
    # the role loop's retry: a new collector and tailer from what the store holds
    tailer = line.tailer()
    line.collector().process(tailer.poll(), NOW + 1)
    assert tailer.poll() == []  # all of it was read in the one poll
    tailer.close()
    seen = line.committed()
    assert len(seen["points"]) == 25
    assert [a for a in seen["alarms"] if a[:2] == ("individuals", "we1")] == [
        ("individuals", "we1", 24)]


def test_a_collector_that_lost_its_lease_writes_nothing(line: Line) -> None:
    mine = Lease(line.store, "stalled", expires_after=3.0)
    assert mine.try_acquire(NOW)
    with Store(line.state) as other:
        assert Lease(other, "taker", expires_after=3.0).try_acquire(NOW + 10)  # after expiry
    tailer = line.tailer()
    with pytest.raises(LeaseLost):
        line.collector(guard=mine.ensure).process(tailer.poll(), NOW + 11)
    tailer.close()
    assert line.committed() == {"offset": [], "points": [], "engines": [], "alarms": []}


def test_a_request_from_the_shell_is_carried_out_once_across_a_restart(tmp_path: Path) -> None:
    second = [v + 2.0 for v in BASE * 3]
    line = Line(tmp_path, BASE * 3 + second)  # 30 points near 10, then 30 near 12
    try:
        tailer = line.tailer()
        line.collector().process(tailer.poll(), NOW)
        tailer.close()
        with Store(line.state) as shell:  # `linewatch baseline` has a connection of its own
            shell.requests.ask("od", 30, "die changed", actor="operator1")
        collector = line.collector()
        out = collector.beat(NOW + 1)
        assert [r for r in out.records if r["type"] == "baseline"] == [
            {"type": "baseline", "characteristic": "od", "start_index": 30,
             "reason": "die changed"}]
        assert collector.engines["od"].phase == 1
        line.reopen()
        restarted = line.collector()  # restores the engine from the committed state
        assert restarted.engines["od"].phase == 1
        again = restarted.beat(NOW + 2)
        assert [r for r in again.records if r["type"] == "baseline"] == []
        entries = line.store.audit.entries()
        asked = [e for e in entries if e.action == "new-baseline" and e.subject == "od"]
        assert len(asked) == 1 and asked[0].actor == "operator1"
        limits = [e.subject for e in entries if e.action == "new-baseline" and e.subject != "od"]
        assert sorted(limits) == ["od/individuals", "od/moving-range"]  # each chart's, once
        new = [r for r in line.store.history.limits_history("od")
               if r.limits.chart == "individuals" and r.limits.phase == 1]
        assert len(new) == 1 and new[0].reason == "die changed"
        assert new[0].limits.center == pytest.approx(np.mean(second[:20]))  # the next 20
        assert line.store.requests.pending() == []
    finally:
        line.store.close()


def test_a_request_that_cannot_start_is_refused_once_with_its_reason(line: Line) -> None:
    tailer = line.tailer()
    collector = line.collector()
    collector.process(tailer.poll(), NOW)
    tailer.close()
    line.store.requests.ask("od", 26, "past the last point", actor="x")  # 25 points so far
    out = collector.beat(NOW + 1)
    (said,) = [r for r in out.records if r["type"] == "baseline"]
    assert said["characteristic"] == "od" and said["problem"]
    (req,) = line.store.requests.of("od")
    assert req.state == "failed" and req.problem == said["problem"]
    assert [r for r in collector.beat(NOW + 2).records if r["type"] == "baseline"] == []
    assert collector.engines["od"].phase == 0
