"""Every alarm list comes in the one urgency order: what still asks for attention before what is
shelved, priority 1 first (common practice in alarm management, ISA-18.2), newest first within a
priority — the queue's views, `alarms list` (`AlarmBook.ranked`) and the read model alike."""

from __future__ import annotations

from linewatch.alarms.book import AlarmBook
from linewatch.domain.alarm_states import AlarmState
from linewatch.domain.records import FeedEvent


def _line(book: AlarmBook) -> dict[str, int]:
    """Four alarms of the default priorities: out-of-spec 1, beyond-limits 2, run-rule 3,
    feed-health 4, raised in the opposite order (the most urgent last)."""
    book.observe_feed(FeedEvent("stale", "/logs/scale.csv"), now=1)
    book.observe_chart("wall", "xbar", 0, 0, {"we4": [0]}, now=2)
    book.observe_chart("od", "xbar", 0, 0, {"we1": [0]}, now=3)
    book.observe_spec("od", 0, [25.3], lsl=24.8, usl=25.2, now=4)
    return {a.kind: a.id for a in book.alarms()}


def test_priority_one_comes_first_whenever_it_was_raised(book: AlarmBook) -> None:
    ids = _line(book)
    expected = [ids["out-of-spec"], ids["beyond-limits"], ids["run-rule"], ids["feed-health"]]
    assert [a.id for a in book.ranked(now=5)] == expected
    assert [v.id for v in book.views(now=5)] == expected
    assert [v.priority for v in book.views(now=5)] == [1, 2, 3, 4]


def test_a_shelved_alarm_goes_below_every_annunciated_one(book: AlarmBook) -> None:
    ids = _line(book)
    book.shelve(ids["out-of-spec"], 600, "die change", now=5)
    order = [a.id for a in book.ranked(now=6)]
    assert order[-1] == ids["out-of-spec"]  # priority 1, but out of annunciation
    assert order[:3] == [ids["beyond-limits"], ids["run-rule"], ids["feed-health"]]
    assert [v.id for v in book.views(now=6)] == order
    assert book.views(now=6)[-1].state == AlarmState.SHELVED


def test_within_a_priority_the_newest_is_on_top(book: AlarmBook) -> None:
    book.observe_chart("od", "xbar", 0, 0, {"we4": [0]}, now=1)
    book.observe_chart("wall", "xbar", 0, 0, {"we4": [0]}, now=2)
    older, newer = book.alarms()
    assert [a.id for a in book.ranked(now=3)] == [newer.id, older.id]


def test_closed_alarms_come_last_in_the_full_list(book: AlarmBook, operator) -> None:
    ids = _line(book)
    # acknowledged, then the condition goes: the out-of-spec alarm is closed (normal)
    book.acknowledge([ids["out-of-spec"]], "tool wear", now=5, actor=operator)
    book.observe_spec("od", 1, [25.0] * 8, lsl=24.8, usl=25.2, now=6)
    full = book.ranked(include_closed=True, now=7)
    assert full[-1].id == ids["out-of-spec"] and full[-1].state(7) == AlarmState.NORMAL
    assert ids["out-of-spec"] not in [a.id for a in book.ranked(now=7)]
