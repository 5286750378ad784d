"""Stale feeds and stuck gauges: each transition reported exactly once.

Common practice: a gauge that repeats exactly the same value many times in a row is more
likely frozen than the process perfectly stable, so it is flagged like a silent feed.
Times are passed in explicitly (seconds), so no test waits on a clock.
"""

from __future__ import annotations

from linewatch.feeds.health import FeedHealth


def kinds(events) -> list[tuple[str, str]]:
    return [(e.kind, e.file) for e in events]


def test_a_feed_goes_stale_once_and_resumes_once() -> None:
    h = FeedHealth(stale_after=600, stuck_repeats=0)
    h.rows_arrived("od.csv", 0, now=0.0)  # starts the clock
    h.rows_arrived("wall.csv", 5, now=0.0)
    assert h.tick(599.0) == []
    assert kinds(h.tick(600.0)) == [("stale", "od.csv"), ("stale", "wall.csv")]
    assert h.tick(900.0) == []
    assert sorted(h.stale) == ["od.csv", "wall.csv"]
    h.rows_arrived("od.csv", 3, now=910.0)
    assert kinds(h.tick(911.0)) == [("resumed", "od.csv")]
    assert h.stale == ["wall.csv"]
    assert kinds(h.tick(1510.0)) == [("stale", "od.csv")]


def test_zero_rows_do_not_resume_a_stale_feed() -> None:
    h = FeedHealth(stale_after=10, stuck_repeats=0)
    h.rows_arrived("od.csv", 1, now=0.0)
    h.tick(20.0)
    h.rows_arrived("od.csv", 0, now=25.0)
    assert h.tick(26.0) == [] and h.stale == ["od.csv"]


def test_a_gauge_repeating_one_value_is_stuck_across_chunks() -> None:
    h = FeedHealth(stale_after=0, stuck_repeats=10)
    h.values_arrived("od", [25.0, 25.013] + [25.02] * 8)
    assert h.tick(1.0) == []
    h.values_arrived("od", [25.02])  # the 9th
    assert h.tick(2.0) == []
    h.values_arrived("od", [25.02, 25.02, 25.02])  # 10th, 11th, 12th
    events = h.tick(3.0)
    assert kinds(events) == [("stuck", "od")]
    assert "characteristic od" in events[0].detail and "25.02" in events[0].detail
    h.values_arrived("od", [25.02] * 20)
    assert h.tick(4.0) == []
    h.values_arrived("od", [25.03, 25.02])
    assert kinds(h.tick(5.0)) == [("unstuck", "od")]
    assert h.stuck == []


def test_a_stuck_spell_inside_one_chunk_reports_both_transitions_in_order() -> None:
    h = FeedHealth(stale_after=0, stuck_repeats=5)
    h.values_arrived("wall", [1.5, 1.4, 1.4, 1.4, 1.4, 1.4, 1.4, 1.6, 1.5])
    h.values_arrived("od", [25.0] * 4)  # one short of stuck
    assert kinds(h.tick(1.0)) == [("stuck", "wall"), ("unstuck", "wall")]


def test_exactly_the_same_value_only() -> None:
    h = FeedHealth(stale_after=0, stuck_repeats=3)
    h.values_arrived("od", [25.0, 25.0 + 1e-12, 25.0, 25.0])
    assert h.tick(1.0) == []


def test_zero_repeats_turns_the_check_off() -> None:
    h = FeedHealth(stale_after=0, stuck_repeats=0)
    h.values_arrived("od", [25.0] * 1000)
    assert h.tick(1.0) == [] and h.stuck == []


def test_a_file_that_never_delivers_goes_stale_from_when_it_appeared() -> None:
    from linewatch.domain.records import FeedEvent

    h = FeedHealth(stale_after=60, stuck_repeats=0)
    h.file_event(FeedEvent("appeared", "od.csv", "reading"), now=100.0)
    h.file_event(FeedEvent("rotated", "wall.csv", ""), now=100.0)  # not a start
    assert h.tick(159.0) == []
    assert kinds(h.tick(160.0)) == [("stale", "od.csv")]
