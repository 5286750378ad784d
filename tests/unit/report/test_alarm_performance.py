"""Alarm performance from the audit trail: small trails whose figures are computed by hand in
the comments, invariants over any trail (hypothesis), and the marks read from a real store.

Guidance figures are ISA-18.2's (quoted from memory): about 1 alarm per 10 minutes per operator
is very likely acceptable, about 2 the most that is manageable, more than 10 in 10 minutes a
flood. The chattering test (3 re-raises within a minute) is common practice."""

from __future__ import annotations

import statistics
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.alarms.book import AlarmBook
from linewatch.report.alarm_performance import (
    ACKNOWLEDGED,
    CLOSED,
    RAISED,
    RE_RAISED,
    RETURNED,
    AlarmMark,
    alarm_performance,
    chattering,
    episodes,
    flood_spans,
    guidance_verdict,
    marks_from_audit,
    open_at_end,
    window_counts,
)
from linewatch.store.actor import Actor
from linewatch.store.db import Store

T0 = 1_780_000_000.0
HOUR = 3600.0


def _trail() -> list[AlarmMark]:
    """One hour: alarm 1 raised at 5 min, acknowledged 2 min later, returned and closed;
    alarm 2 chatters (raised at 20:00, re-raised at 20:10, 20:30, 20:50, never acknowledged);
    alarm 3 raised shelved at 40:00 (not shown to anyone); alarm 4 raised before the hour
    (at -10 min) and acknowledged at 30 s into it."""
    m = AlarmMark
    return [
        m(T0 - 600, 4, RAISED, 3),
        m(T0 + 30, 4, ACKNOWLEDGED, actor="maria"),
        m(T0 + 300, 1, RAISED, 61),
        m(T0 + 420, 1, ACKNOWLEDGED, actor="maria"),
        m(T0 + 480, 1, RETURNED, 64),
        m(T0 + 480, 1, CLOSED),
        m(T0 + 1200, 2, RAISED, 100),
        m(T0 + 1205, 2, RETURNED, 100),
        m(T0 + 1210, 2, RE_RAISED, 110),
        m(T0 + 1215, 2, RETURNED, 111),
        m(T0 + 1230, 2, RE_RAISED, 120),
        m(T0 + 1235, 2, RETURNED, 120),
        m(T0 + 1250, 2, RE_RAISED, 130),
        m(T0 + 2400, 3, RAISED, 7, shelved=True),
    ]


def test_figures_of_a_small_trail_computed_by_hand() -> None:
    perf = alarm_performance(_trail(), T0, T0 + HOUR)
    # Annunciations in the hour: alarm 1 once, alarm 2 four times (raise + 3 re-raises);
    # alarm 3 was shelved and alarm 4 raised before the hour: 5 in 60 min = 0.8333 per 10 min.
    assert perf.annunciations == 5
    assert abs(perf.per_ten_minutes - 5 / 6) < 1e-12
    # 10-minute windows from T0: [0,10) holds alarm 1, [20,30) the four of alarm 2.
    assert perf.peak_ten_minutes == 4
    assert (perf.windows, perf.flood_windows) == (6, 0)
    assert perf.most_frequent == [(2, 4)]  # alarm 1, shown once, is no burden to name
    # Alarm 2: re-raised at 20:10, 20:30, 20:50 — three within 40 s.
    assert [(c.alarm_id, c.re_raised, c.most_in_window) for c in perf.chattering] == [(2, 3, 3)]
    # Open at the end: 4 (acknowledged, not returned; 70 min old), 2 (40 min old), 3 (20 min).
    assert [(o.alarm_id, o.age, o.acknowledged) for o in perf.open_at_end] == [
        (4, 4200.0, True), (2, 2400.0, False), (3, 1200.0, False)
    ]
    # Waits: alarm 4 raised 10 min before the hour, acknowledged 30 s in: 630 s; alarm 1: 120 s.
    assert sorted(perf.acknowledge_times) == [120.0, 630.0]
    assert perf.median_to_acknowledge == 375.0 and perf.longest_to_acknowledge == 630.0


def test_episodes_pair_raises_with_returns() -> None:
    eps = [(e.alarm_id, e.first_index, e.last_index, e.returned_at is not None)
           for e in episodes(_trail())]
    assert eps == [
        (4, 3, None, False), (1, 61, 64, True), (2, 100, 100, True), (2, 110, 111, True),
        (2, 120, 120, True), (2, 130, None, False), (3, 7, None, False),
    ]


def test_the_wait_restarts_only_after_an_acknowledgement() -> None:
    # Shown at 0 and re-raised at 100 s unacknowledged: acknowledged at 130 s, it waited 130 s.
    # Acknowledged again 40 s after a re-raise at 200 s (while shelved: not shown) and 260 s.
    marks = [AlarmMark(T0, 1, RAISED), AlarmMark(T0 + 100, 1, RE_RAISED),
             AlarmMark(T0 + 130, 1, ACKNOWLEDGED), AlarmMark(T0 + 200, 1, RE_RAISED, shelved=True),
             AlarmMark(T0 + 260, 1, RE_RAISED), AlarmMark(T0 + 300, 1, ACKNOWLEDGED)]
    assert alarm_performance(marks, T0, T0 + HOUR).acknowledge_times == [130.0, 40.0]


def test_a_flood_window_needs_more_than_the_limit() -> None:
    # Exactly 10 in the first 10 minutes is not a flood, 11 in the second is (ISA-18.2
    # guidance: more than about 10 in 10 minutes, from memory).
    marks = [AlarmMark(T0 + k, k, RAISED) for k in range(10)]
    marks += [AlarmMark(T0 + 600 + k, 100 + k, RAISED) for k in range(11)]
    perf = alarm_performance(marks, T0, T0 + 1800)
    assert (perf.windows, perf.flood_windows, perf.peak_ten_minutes) == (3, 1, 11)
    assert perf.flood_share == 1 / 3
    # A 5-minute flood window with a limit of 5: 0-5 min holds 10, 10-15 min holds 11.
    short = alarm_performance(marks, T0, T0 + 1800, flood_alarms=5, flood_window=300)
    assert (short.windows, short.flood_windows) == (6, 2)


def test_chattering_needs_three_re_raises_within_a_minute() -> None:
    # 0, 30, 61 s: 61 s apart at the ends, never three in 60 s; 0, 30, 60: exactly a minute.
    slow = [AlarmMark(T0 + t, 1, RE_RAISED) for t in (0, 30, 61)]
    edge = [AlarmMark(T0 + t, 2, RE_RAISED) for t in (0, 30, 60)]
    found = chattering(slow + edge, T0, T0 + HOUR)
    assert [c.alarm_id for c in found] == [2]


def test_the_guidance_verdict_names_the_band() -> None:
    assert "very likely acceptable" in guidance_verdict(1.0)
    assert "within the most that is manageable" in guidance_verdict(1.5)
    assert "above the most" in guidance_verdict(2.01)


def test_a_closed_alarm_is_not_open_at_the_end() -> None:
    marks = _trail()
    # Before alarm 1's closing it is open, from then on not.
    assert 1 in [o.alarm_id for o in open_at_end(marks, T0 + 480)]
    assert 1 not in [o.alarm_id for o in open_at_end(marks, T0 + 481)]


def test_marks_read_from_a_real_store(tmp_path: Path) -> None:
    store = Store(tmp_path / "state")
    try:
        book = AlarmBook(store)
        # Firing at 61, quiet to 70 (clear_after 8: returns at 69), firing again at 75.
        book.observe_chart("od", "individuals", 60, 70, {"we1": [61]}, now=T0)
        book.observe_chart("od", "individuals", 71, 75, {"we2": [75]}, now=T0 + 60)
        (alarm,) = store.alarms.all()
        book.acknowledge([alarm.id], "no cause found", now=T0 + 90, actor=Actor("ana", ""))
        marks = marks_from_audit(store.audit.entries())
    finally:
        store.close()
    assert [(m.action, m.index) for m in marks] == [
        (RAISED, 61), (RETURNED, 61), (RE_RAISED, 75), (ACKNOWLEDGED, None)
    ]
    perf = alarm_performance(marks, T0, T0 + 600)
    # Raised at 0 s, re-raised at +60 s while still unacknowledged, acknowledged at +90 s: it
    # waited 90 s for a person (the re-raise does not restart the clock).
    assert perf.acknowledge_times == [90.0]


# -- invariants over any trail -------------------------------------------------------------

_mark = st.builds(
    AlarmMark,
    at=st.floats(T0 - 900, T0 + 3 * HOUR, allow_nan=False),
    alarm_id=st.integers(1, 6),
    action=st.sampled_from([RAISED, RE_RAISED, RETURNED, ACKNOWLEDGED, CLOSED]),
    index=st.none() | st.integers(0, 500),
    shelved=st.booleans(),
)


@settings(max_examples=200, deadline=None)
@given(marks=st.lists(_mark, max_size=60), minutes=st.integers(1, 180),
       limit=st.integers(1, 12), window=st.sampled_from([60.0, 300.0, 600.0, 900.0]))
def test_invariants_over_any_trail(
    marks: list[AlarmMark], minutes: int, limit: int, window: float
) -> None:
    end = T0 + 60 * minutes
    perf = alarm_performance(marks, T0, end, flood_alarms=limit, flood_window=window)
    shown = [m for m in marks if m.annunciated and T0 <= m.at < end]
    # Every annunciation lies in exactly one window.
    assert sum(window_counts([m.at for m in shown], T0, end, window)) == perf.annunciations
    assert perf.annunciations == len(shown)
    # The peak is at least the average per window and at most the total.
    tens = window_counts([m.at for m in shown], T0, end, 600.0)
    assert perf.peak_ten_minutes <= perf.annunciations
    assert perf.peak_ten_minutes * len(tens) >= perf.annunciations
    assert 0 <= perf.flood_windows <= perf.windows
    if perf.annunciations <= limit:
        assert perf.flood_windows == 0
    # Most frequent counts add up to at most the total and are in order.
    counts = [n for _, n in perf.most_frequent]
    assert sum(counts) <= perf.annunciations and counts == sorted(counts, reverse=True)
    # Chattering alarms were re-raised at least 3 times in the period.
    for c in perf.chattering:
        assert c.most_in_window >= 3 and c.re_raised >= c.most_in_window
    # Waits are never negative; the median lies at or below the longest.
    assert all(w >= 0 for w in perf.acknowledge_times)
    if perf.acknowledge_times:
        assert perf.median_to_acknowledge == statistics.median(perf.acknowledge_times)
        assert perf.median_to_acknowledge <= perf.longest_to_acknowledge  # type: ignore[operator]
    # An alarm open at the end has a raise before it and no close after its raise (a close at
    # the very same moment may come before it in the trail).
    for o in perf.open_at_end:
        assert o.age >= 0
        assert not any(m.alarm_id == o.alarm_id and m.action == CLOSED
                       and o.raised_at < m.at < end for m in marks)
    # The order in which marks are given does not matter.
    again = alarm_performance(list(reversed(sorted(marks, key=lambda m: m.at))), T0, end,
                              flood_alarms=limit, flood_window=window)
    assert again.annunciations == perf.annunciations
    assert again.chattering == perf.chattering


@settings(max_examples=200, deadline=None)
@given(marks=st.lists(_mark, max_size=60))
def test_every_raise_starts_exactly_one_episode(marks: list[AlarmMark]) -> None:
    eps = episodes(marks)
    starts = [m for m in marks if m.action in (RAISED, RE_RAISED)]
    assert len(eps) == len(starts)
    for e in eps:
        assert e.returned_at is None or e.returned_at >= e.started_at


@settings(max_examples=40, deadline=None)
@given(firings=st.lists(st.integers(0, 120), max_size=25),
       cuts=st.lists(st.integers(1, 120), max_size=6), clear_after=st.integers(1, 10))
def test_episodes_from_the_trail_are_the_definition_s(
    firings: list[int], cuts: list[int], clear_after: int
) -> None:
    # Whatever the chunking of the judged points into passes, the episodes read back from the
    # audit trail are those of THE definition (engine.episodes) applied to the whole series.
    import tempfile
    from itertools import pairwise

    from linewatch.engine.episodes import episodes as defined

    bounds = [0, *sorted(set(cuts)), 121]
    with tempfile.TemporaryDirectory() as folder:
        store = Store(Path(folder) / "state")
        try:
            book = AlarmBook(store)
            for k, (lo, hi) in enumerate(pairwise(bounds)):
                fired = {"we1": [i for i in firings if lo <= i < hi]}
                book.observe_chart("od", "individuals", lo, hi - 1, fired, now=T0 + k,
                                   clear_after=clear_after)
            read = episodes(marks_from_audit(store.audit.entries()))
        finally:
            store.close()
    expected = defined(firings, 120, clear_after)
    assert [(e.first_index, e.last_index if e.returned_at else None) for e in read] == [
        (e.first, e.last if e.returned_at is not None else None) for e in expected
    ]


def test_floods_from_the_collector_s_entries() -> None:
    # One flood begun before the hour (its end names its start), one inside it, one still on.
    from dataclasses import dataclass as _dc

    @_dc
    class E:
        at: float
        action: str
        payload: str = "{}"
        actor: str = "linewatch"
        subject: str = "alarms"

    entries = [
        E(T0 + 120, "flood-ended", f'{{"since": {T0 - 300}, "peak": 14}}'),
        E(T0 + 600, "flood-started"),
        E(T0 + 900, "flood-ended", f'{{"since": {T0 + 600}, "peak": 12}}'),
        E(T0 + 3000, "flood-started"),
    ]
    spans = flood_spans(entries, T0, T0 + HOUR)
    assert [(s.started - T0, None if s.ended is None else s.ended - T0, s.peak) for s in spans] == [
        (-300, 120, 14), (600, 900, 12), (3000, None, None)
    ]


def test_alarms_raised_while_shelved_are_not_shown(tmp_path: Path) -> None:
    store = Store(tmp_path / "state")
    try:
        book = AlarmBook(store)
        book.shelve_characteristic("od", 1800, "gauge being recalibrated", now=T0,
                                   actor=Actor("ana", ""))
        book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=T0 + 10)
        book.observe_chart("wall", "individuals", 0, 0, {"we1": [0]}, now=T0 + 20)
        marks = marks_from_audit(store.audit.entries())
    finally:
        store.close()
    # The od alarm opens shelved (its audit payload says so); only the wall alarm is shown.
    assert [(m.action, m.shelved) for m in marks] == [(RAISED, True), (RAISED, False)]
    assert alarm_performance(marks, T0, T0 + 600).annunciations == 1
