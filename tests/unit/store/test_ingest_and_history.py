"""Ingest state, points, limits history and feed events: what the monitor writes per batch and
what the faces and the shift report read back."""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

import pytest

from linewatch.domain.records import FeedEvent, FileState, Limits
from linewatch.store.db import Store
from linewatch.store.points import History


def test_file_positions_round_trip_and_update(store: Store) -> None:
    a = FileState("/logs/od.csv", dev=2049, inode=131, fingerprint="ab12", offset=4096,
                  next_line=88)
    store.ingest.save_file(a, now=1)
    store.ingest.save_file(FileState("/logs/od.csv", 2049, 131, "ab12", 8192, 170), now=2)
    store.ingest.save_file(FileState("/logs/wall.csv", 2049, 132, "cd34", 10), now=2)
    files = store.ingest.files()
    assert files["/logs/od.csv"].offset == 8192 and files["/logs/od.csv"].next_line == 170
    assert files["/logs/wall.csv"].next_line == 1
    assert files["/logs/wall.csv"].header is None
    store.ingest.save_file(FileState("/logs/wall.csv", 2049, 132, "cd34", 10, 2,
                                     ("time", "wall, mm")), now=3)
    assert store.ingest.files()["/logs/wall.csv"].header == ("time", "wall, mm")
    store.ingest.forget_file("/logs/wall.csv")
    assert list(store.ingest.files()) == ["/logs/od.csv"]


def test_engine_state_is_kept_verbatim(store: Store) -> None:
    blob = json.dumps({"tail": [1.5, 2.25], "limits": None, "n": 17})
    store.ingest.save_engine("od", blob, now=1)
    store.ingest.save_engine("od", blob.replace("17", "18"), now=2)
    assert json.loads(store.ingest.engines()["od"])["n"] == 18


def test_points_append_query_and_refuse_doubles(store: Store) -> None:
    h = store.history
    h.add_points("od", 0, [10.0, 10.1, 9.9], [2, 3, 4], "/logs/od.csv",
                 ["08:00:00", "08:00:01", None], received_at=100.0)
    h.add_points("od", 3, [10.2], [5], "/logs/od.csv", received_at=200.0)
    assert [p.index for p in h.points("od")] == [0, 1, 2, 3]
    assert [p.value for p in h.points("od", since=150.0)] == [10.2]
    assert [p.line for p in h.points("od", until=150.0)] == [2, 3, 4]
    assert [p.index for p in h.last_points("od", 2)] == [2, 3]
    assert h.points("od")[1].time == "08:00:01"
    with pytest.raises(sqlite3.IntegrityError, match="UNIQUE"):
        h.add_points("od", 3, [10.2], [5], "/logs/od.csv", received_at=201.0)
    assert len(h.points("od")) == 4
    with pytest.raises(ValueError):
        h.add_points("od", 4, [1.0, 2.0], [6], "/logs/od.csv")


def test_prune_by_age_and_by_count(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as store:
        h = History(store, keep_seconds=1000.0, keep_points=5, prune_every=float("inf"))
        h.add_points("od", 0, [1.0] * 3, [1, 2, 3], "f", received_at=0.0)
        h.add_points("od", 3, [2.0] * 6, list(range(4, 10)), "f", received_at=5000.0)
        h.add_points("wall", 0, [3.0] * 2, [1, 2], "f", received_at=5000.0)
        assert h.prune(now=5500.0) == 3 + 1
        assert [p.index for p in h.points("od")] == [4, 5, 6, 7, 8]
        assert len(h.points("wall")) == 2
        assert h.characteristics_with_points() == ["od", "wall"]


def test_adding_points_prunes_by_itself_about_hourly(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as store:
        h = History(store, keep_seconds=100.0, keep_points=1000, prune_every=3600.0)
        h.add_points("od", 0, [1.0] * 3, [1, 2, 3], "f", received_at=0.0)  # first add prunes
        h.add_points("od", 3, [1.0], [4], "f", received_at=500.0)  # within the hour: kept
        assert len(h.points("od")) == 4
        h.add_points("od", 4, [1.0], [5], "f", received_at=3700.0)  # an hour on: pruned
        assert [p.index for p in h.points("od")] == [4]


def test_limits_history_and_its_audit_entries(store: Store) -> None:
    first = Limits("od", "xbar", 25.0, 25.3, 24.7, 0.1, phase=0, start_index=0)
    second = Limits("od", "xbar", 25.1, 25.4, 24.8, 0.1, phase=1, start_index=120)
    store.history.record_limits(first, "Phase I from 25 points", now=10)
    store.history.record_limits(second, "new die installed", now=20, actor="engineer",
                                new_baseline=True)
    history = store.history.limits_history("od")
    assert [r.limits for r in history] == [first, second]
    assert history[1].reason == "new die installed"
    assert store.history.current_limits("od") == {"xbar": second}
    assert store.history.limits_history(since=15) == history[1:]
    entries = store.audit.entries()
    assert [(e.action, e.subject, e.actor) for e in entries] == [
        ("limits-set", "od/xbar", entries[0].actor),
        ("new-baseline", "od/xbar", "engineer"),
    ]
    assert json.loads(entries[1].payload)["start_index"] == 120


def test_feed_events_in_a_period(store: Store) -> None:
    store.history.add_feed_event(FeedEvent("appeared", "/logs/od.csv"), at=10)
    store.history.add_feed_event(FeedEvent("rotated", "/logs/od.csv", "renamed to od.csv.1"), at=20)
    store.history.add_feed_event(FeedEvent("stale", "/logs/od.csv"), at=30)
    got = store.history.feed_events(since=15, until=30)
    assert [(r.at, r.event) for r in got] == [
        (20, FeedEvent("rotated", "/logs/od.csv", "renamed to od.csv.1"))
    ]


def test_one_batch_is_all_or_nothing(store: Store) -> None:
    """Offsets, engine state, points, limits and alarms of one batch commit together."""
    from linewatch.alarms.book import AlarmBook

    book = AlarmBook(store)

    def batch(offset: int, fail: bool) -> None:
        with store.transaction():
            store.ingest.save_file(FileState("/logs/od.csv", 1, 2, "fp", offset, 4))
            store.ingest.save_engine("od", '{"n": 3}')
            store.history.add_points("od", 0, [1.0, 2.0, 30.0], [1, 2, 3], "/logs/od.csv")
            store.history.record_limits(Limits("od", "individuals", 1.5, 2.5, 0.5, 0.33))
            book.observe_chart("od", "individuals", 2, 2, {"we1": [2]})
            if fail:
                raise KeyboardInterrupt  # the process is stopped in the middle

    with pytest.raises(KeyboardInterrupt):
        batch(120, fail=True)
    assert store.ingest.files() == {} and store.ingest.engines() == {}
    assert store.history.points("od") == [] and store.history.limits_history() == []
    assert book.alarms() == [] and store.audit.entries() == []
    batch(120, fail=False)
    assert store.ingest.files()["/logs/od.csv"].offset == 120
    assert len(book.alarms()) == 1 and store.audit.verify().ok


def test_alarms_in_a_period(store: Store) -> None:
    from linewatch.alarms.book import AlarmBook
    from linewatch.store.actor import Actor

    book = AlarmBook(store)
    book.observe_chart("od", "individuals", 0, 1, {"we1": [0]}, now=100,  # returns at once
                       clear_after=1)
    book.acknowledge([1], "tool wear", now=150, actor=Actor("op"))  # closed at 150
    book.observe_chart("od", "individuals", 2, 2, {"we1": [2]}, now=300,  # still open
                       clear_after=1)
    assert [a.id for a in store.alarms.between(0, 99)] == []
    assert [a.id for a in store.alarms.between(120, 200)] == [1]
    assert [a.id for a in store.alarms.between(160, 400)] == [2]
    assert [a.id for a in store.alarms.between(0, 1000)] == [1, 2]


def test_prune_by_age_counts_back_from_the_newest_point_of_an_old_history(
    tmp_path: Path,
) -> None:
    """A history caught up from a file last written long ago keeps its last stretch."""
    with Store(tmp_path / "s") as store:
        h = History(store, keep_seconds=1000.0, keep_points=100, prune_every=float("inf"))
        h.add_points("od", 0, [1.0] * 2, [1, 2], "f", received_at=0.0)
        h.add_points("od", 2, [1.0] * 2, [3, 4], "f", received_at=1500.0)
        assert h.prune(now=1_000_000.0) == 2
        assert [p.index for p in h.points("od")] == [2, 3]
