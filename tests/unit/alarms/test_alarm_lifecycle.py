"""Alarm lifecycle: ISA-18.2 states, acknowledgement, reasons, shelving, audit entries.

State names and transitions: ISA-18.2 / IEC 62682 alarm state model (common practice):
unacknowledged -> acknowledged -> normal, or unacknowledged -> returned-unacknowledged -> normal;
shelved suppresses the display for a time. The episode model itself (one alarm per chart,
clear_after, re-raise, escalation, flood) is pinned in test_alarm_model.py; tests here that only
need an alarm which returns at once pass clear_after=1 ("returns at the first quiet point").
"""

from __future__ import annotations

import pytest

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.domain.errors import LinewatchError
from linewatch.domain.records import FeedEvent
from linewatch.engine.rulebook import RULES
from linewatch.present.view import (
    ACKNOWLEDGED,
    NORMAL,
    RETURNED_UNACKNOWLEDGED,
    SHELVED,
    UNACKNOWLEDGED,
)
from linewatch.store.actor import Actor
from linewatch.store.db import Store


def actions(store: Store) -> list[tuple[str, str]]:
    return [(e.action, e.subject) for e in store.audit.entries()]


def test_an_episode_extends_across_batches_and_returns_at_the_clear_after_th_quiet_point(
    book: AlarmBook,
) -> None:
    # clear_after 8 (the default): firings at 3, 4 and 5 (across two batches) are one episode;
    # it returns to normal when point 5 + 8 = 13 is judged, not at 12.
    book.observe_chart("od", "xbar", 0, 4, {"we2": [3, 4]}, now=10)
    book.observe_chart("od", "xbar", 5, 12, {"we2": [5]}, now=11)
    [alarm] = book.alarms(include_closed=True)
    assert (alarm.first_index, alarm.last_index, alarm.signals) == (3, 5, 3)
    assert alarm.state(12) == UNACKNOWLEDGED
    book.observe_chart("od", "xbar", 13, 13, {}, now=12)
    [alarm] = book.alarms(include_closed=True)
    assert alarm.state(13) == RETURNED_UNACKNOWLEDGED
    assert alarm.returned_at == 12
    actions_seen = [e.action for e in book.store.audit.entries()]
    assert actions_seen == ["raised", "returned-to-normal"]


def test_kind_priority_and_plain_words(book: AlarmBook) -> None:
    book.observe_chart("od", "xbar", 0, 0, {"we1": [0], "we4": [0]}, now=1)
    book.observe_chart("od", "range", 0, 0, {"we1": [0]}, now=1)
    book.observe_chart("wall", "xbar", 0, 0, {"we4": [0]}, now=1)
    by_key = {(a.characteristic, a.chart): a for a in book.alarms()}
    assert len(by_key) == 3  # one alarm per characteristic and chart, whatever the rules
    # both rules of od's X-bar chart feed one alarm, of the most urgent kind among them
    assert by_key["od", "xbar"].kind == "beyond-limits"
    assert by_key["od", "xbar"].rule_counts == {"we1": 1, "we4": 1}
    assert by_key["od", "range"].kind == "beyond-limits"
    assert by_key["wall", "xbar"].kind == "run-rule"
    # Default priorities: out-of-spec 1 > beyond-limits 2 > run-rule 3 > feed-health 4
    # (lower number = more urgent).
    assert by_key["od", "xbar"].priority == 2
    assert by_key["wall", "xbar"].priority == 3
    views = book.views(now=2)
    assert [v.priority for v in views] == sorted(v.priority for v in views)
    we4 = next(v for v in views if v.rule == "we4")
    assert RULES["we4"].describe() in we4.description
    assert we4.state == UNACKNOWLEDGED
    assert we4.reasons[0] == "tool wear"


def test_acknowledge_then_return_closes(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1, clear_after=1)
    events = book.acknowledge([1], "tool wear", "changed insert", now=5, actor=operator)
    assert [e.action for e in events] == ["acknowledged"]
    alarm = book.store.alarms.get(1)
    assert alarm is not None
    assert alarm.state(6) == ACKNOWLEDGED
    assert (alarm.acknowledged_by, alarm.acknowledged_from) == ("operator1", "10.1.2.3")
    assert (alarm.reason, alarm.note, alarm.acknowledged_at) == ("tool wear", "changed insert", 5)
    events = book.observe_chart("od", "individuals", 1, 1, {}, now=7, clear_after=1)
    assert [e.action for e in events] == ["returned-to-normal", "closed"]
    alarm = book.store.alarms.get(1)
    assert alarm is not None and alarm.state(8) == NORMAL and alarm.closed_at == 7
    assert book.alarms() == []
    entries = book.store.audit.entries()
    assert [e.action for e in entries] == ["raised", "acknowledged", "returned-to-normal", "closed"]
    assert entries[1].actor == "operator1@10.1.2.3"


def test_return_then_acknowledge_closes(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "individuals", 0, 1, {"we1": [0]}, now=1, clear_after=1)
    assert book.alarms()[0].state(2) == RETURNED_UNACKNOWLEDGED
    events = book.acknowledge([1], "no cause found", now=3, actor=operator)
    assert [e.action for e in events] == ["acknowledged", "closed"]
    assert book.alarms() == []


def test_reason_by_number_and_any_case(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    book.observe_chart("wall", "individuals", 0, 0, {"we1": [0]}, now=1)
    book.acknowledge([1], "3", now=2, actor=operator)
    book.acknowledge([2], "ADJUSTMENT MADE", now=2, actor=operator)
    reasons = [a.reason for a in book.alarms()]
    assert reasons == ["gauge or measurement error", "adjustment made"]


@pytest.mark.parametrize(
    ("reason", "message"),
    [("", "a reason is required"), ("   ", "a reason is required"), ("9", "no reason number 9"),
     ("0", "no reason number 0"), ("coffee break", "unknown reason")],
)
def test_bad_reason_changes_nothing(
    book: AlarmBook, operator: Actor, reason: str, message: str
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    before = len(book.store.audit.entries())
    with pytest.raises(LinewatchError, match=message):
        book.acknowledge([1], reason, now=2, actor=operator)
    assert book.alarms()[0].acknowledged is False
    assert len(book.store.audit.entries()) == before


def test_one_unknown_id_means_no_acknowledgement_at_all(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    with pytest.raises(LinewatchError, match="no alarm with id 99"):
        book.acknowledge([1, 99], "tool wear", now=2, actor=operator)
    assert not book.alarms()[0].acknowledged
    book.acknowledge([1], "tool wear", now=2, actor=operator)
    with pytest.raises(LinewatchError, match=r"already acknowledged \(by operator1"):
        book.acknowledge([1], "tool wear", now=3, actor=operator)


def test_reasons_from_the_characteristic_config(store: Store, operator: Actor) -> None:
    config = parse_config(
        '[alarms]\nreasons = ["line stop", "other"]\n'
        '[[characteristic]]\nname = "od"\nreasons = ["die wear", "melt temperature"]\n'
        'reaction_plan = "stop the puller and call the setter"\n'
        '[characteristic.reaction_plans]\nwe4 = "check the die heater zones"\n',
        "line.toml",
    )
    book = AlarmBook(store)
    book.load_config(config, now=0)
    assert store.audit.entries()[-1].action == "config-loaded"
    assert config.digest in store.audit.entries()[-1].payload
    # the first-out rule of an alarm picks its reaction plan: we1 on one chart, we4 on another
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    book.observe_chart("od", "moving-range", 1, 1, {"we4": [1]}, now=1)
    book.observe_feed(FeedEvent("stale", "/logs/scale.csv"), now=1)
    views = {v.rule: v for v in book.views(now=2)}
    assert views["we1"].reaction_plan == "stop the puller and call the setter"
    assert views["we4"].reaction_plan == "check the die heater zones"
    assert views["stale"].reasons == ["line stop", "other"]
    with pytest.raises(LinewatchError, match="unknown reason"):
        book.acknowledge([1], "tool wear", now=2, actor=operator)
    # A book without the config (a shell command) remembers the reasons from the store.
    shell_book = AlarmBook(store)
    shell_book.acknowledge([1], "2", now=3, actor=operator)
    assert store.alarms.get(1).reason == "melt temperature"  # type: ignore[union-attr]


def test_acknowledge_every_open_alarm_of_one_characteristic(
    book: AlarmBook, operator: Actor
) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1)
    book.observe_chart("od", "moving-range", 1, 1, {"we4": [1]}, now=1)
    book.observe_chart("wall", "individuals", 0, 0, {"we1": [0]}, now=1)
    book.acknowledge([1], "tool wear", now=2, actor=operator)
    assert book.acknowledge_characteristic("od", "1", now=3, actor=operator) == 1
    assert book.acknowledge_characteristic("od", "1", now=3, actor=operator) == 0
    states = {(a.characteristic, a.chart): a.acknowledged for a in book.alarms()}
    assert states == {("od", "individuals"): True, ("od", "moving-range"): True,
                      ("wall", "individuals"): False}
    with pytest.raises(LinewatchError, match="a reason is required"):
        book.acknowledge_characteristic("wall", "", now=4, actor=operator)


def test_shelving_expires_by_itself_and_keeps_recording(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we4": [0]}, now=100)
    book.shelve(1, 60, "die change in progress", now=110, actor=operator)
    alarm = book.store.alarms.get(1)
    assert alarm is not None and alarm.state(120) == SHELVED
    assert book.view(alarm, now=120).shelved_until == 170
    # Still recorded and still updated while shelved.
    book.observe_chart("od", "individuals", 1, 2, {"we4": [1, 2]}, now=130)
    alarm = book.store.alarms.get(1)
    assert alarm is not None and alarm.last_index == 2 and alarm.state(130) == SHELVED
    # The time passes: the state is back without anybody doing anything ...
    assert alarm.state(171) == UNACKNOWLEDGED
    # ... and the collector's housekeeping records the end of shelving.
    events = book.tick(now=171)
    assert [e.action for e in events] == ["unshelved"]
    assert book.tick(now=172) == []
    last = book.store.audit.entries()[-1]
    assert (last.action, last.actor) == ("unshelved", "linewatch")
    assert '"expired":true' in last.payload


def test_unshelve_and_its_errors(book: AlarmBook, operator: Actor) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we4": [0]}, now=100)
    with pytest.raises(LinewatchError, match="not shelved"):
        book.unshelve(1, now=101, actor=operator)
    with pytest.raises(LinewatchError, match="reason is required"):
        book.shelve(1, 60, " ", now=101, actor=operator)
    with pytest.raises(LinewatchError, match="more than 0"):
        book.shelve(1, 0, "x", now=101, actor=operator)
    with pytest.raises(LinewatchError, match="no alarm with id 7"):
        book.shelve(7, 60, "x", now=101, actor=operator)
    book.shelve(1, 600, "die change", now=101, actor=operator)
    book.unshelve(1, now=102, actor=operator)
    alarm = book.store.alarms.get(1)
    assert alarm is not None and alarm.state(103) == UNACKNOWLEDGED
    assert [e.action for e in book.store.audit.entries()] == ["raised", "shelved", "unshelved"]


def test_out_of_spec_is_one_alarm_per_characteristic_counting_both_sides(
    book: AlarmBook,
) -> None:
    # USL 10.5: a value equal to the limit conforms (common practice: beyond means outside).
    # clear_after 3 measurements: 1..3 above USL and 5..6 below LSL are one episode (one
    # conforming part between them), then 7..9 conform: it returns at 6 + 3 = 9.
    book.observe_spec("od", 0, [10.0, 10.6, 10.7], lsl=9.5, usl=10.5, now=1, clear_after=3)
    book.observe_spec("od", 3, [10.8, 10.5, 9.4, 9.0, 10.0, 10.1], lsl=9.5, usl=10.5, now=2,
                      clear_after=3)
    [alarm] = book.alarms(include_closed=True)
    assert (alarm.kind, alarm.priority, alarm.chart, alarm.rule) == (
        "out-of-spec", 1, "individuals", "usl")
    assert (alarm.first_index, alarm.last_index, alarm.signals, alarm.episodes) == (1, 6, 5, 1)
    assert (alarm.below_lsl, alarm.above_usl) == (2, 3)
    assert alarm.active
    book.observe_spec("od", 9, [10.0], lsl=9.5, usl=10.5, now=3, clear_after=3)
    assert book.store.alarms.get(alarm.id).active is False  # type: ignore[union-attr]
    # A rule alarm on the individuals chart is a different alarm from out-of-spec.
    book.observe_spec("od", 10, [11.0], lsl=9.5, usl=10.5, now=4, clear_after=3)
    book.observe_chart("od", "individuals", 10, 10, {"we1": [10]}, now=4)
    kinds = sorted(a.kind for a in book.alarms())
    assert kinds == ["beyond-limits", "out-of-spec"]


def test_feed_health_raises_once_and_clears(book: AlarmBook) -> None:
    stale = FeedEvent("stale", "/logs/od.csv", "no row for 10m")
    assert [e.action for e in book.observe_feed(stale, now=1)] == ["raised"]
    assert book.observe_feed(stale, now=2) == []  # already raised
    assert book.observe_feed(FeedEvent("rotated", "/logs/od.csv"), now=3) == []
    events = book.observe_feed(FeedEvent("resumed", "/logs/od.csv"), now=4)
    assert [e.action for e in events] == ["returned-to-normal"]
    book.observe_feed(FeedEvent("stuck", "/logs/od.csv"), now=5, characteristic="od")
    [stale_alarm, stuck] = book.alarms()
    assert (stale_alarm.kind, stale_alarm.priority, stale_alarm.active) == ("feed-health", 4, False)
    assert (stuck.characteristic, stuck.rule, stuck.active) == ("od", "stuck", True)


def test_priorities_come_from_the_config(store: Store) -> None:
    config = parse_config('[alarms.priorities]\nfeed-health = 1\nrun-rule = 5\n', "p.toml")
    book = AlarmBook(store, config)
    book.observe_feed(FeedEvent("unreadable", "/logs/x.csv"), now=1)
    book.observe_chart("od", "individuals", 0, 0, {"we4": [0]}, now=2)
    assert [(v.kind, v.priority) for v in book.views(now=3)] == [
        ("feed-health", 1), ("run-rule", 5)
    ]


def test_list_record_has_exactly_the_documented_keys(book: AlarmBook) -> None:
    book.observe_chart("od", "individuals", 0, 0, {"we1": [0]}, now=1_700_000_000)
    record = book.list_record(book.alarms()[0], now=1_700_000_001)
    # the keys the list always had, then those the episode model adds, in the documented order
    assert list(record) == [
        "id", "kind", "characteristic", "chart", "rule", "first_index", "last_index",
        "raised_at", "state", "priority", "acknowledged_by", "acknowledged_at", "reason", "note",
        "shelved_until", "signals", "episodes", "rules", "below_lsl", "above_usl",
        "escalated_at",
    ]
    assert record["state"] == UNACKNOWLEDGED


def test_a_firing_judged_in_an_earlier_pass_is_not_counted_again(book: AlarmBook) -> None:
    """A point before the judged range was counted when it was judged (an earlier pass or
    phase): it neither raises nor stops the pass (it used to raise ValueError, and the collector
    stalled on it for good after a new baseline)."""
    book.observe_chart("od", "individuals", 0, 4, {"we1": [4]}, now=1)
    book.observe_chart("od", "individuals", 5, 9, {"we1": [4, 6]}, now=2)
    [alarm] = book.alarms(include_closed=True)
    assert (alarm.signals, alarm.rule_counts, alarm.first_index, alarm.last_index) == (
        2, {"we1": 2}, 4, 6)
    assert book.observe_chart("od", "individuals", 10, 12, {"we1": [3]}, now=3) == []
    with pytest.raises(ValueError, match="empty range"):
        book.observe_chart("od", "individuals", 5, 4, {}, now=4)


def test_a_chart_marks_exactly_the_points_at_which_a_rule_fired(
    book: AlarmBook, operator: Actor,
) -> None:
    """A close-up from point 50 on marks the firings of every alarm, open or closed, of its
    characteristic at 50 or later, and never the quiet points an episode spans."""
    book.observe_chart("od", "individuals", 0, 20, {"we1": [10]}, now=1.0)
    book.acknowledge([1], "tool wear", now=1.5, actor=operator)  # closes it
    book.observe_chart("od", "individuals", 21, 65, {"we1": [45, 52]}, now=2.0)  # one episode
    book.acknowledge([2], "tool wear", now=2.5, actor=operator)
    book.observe_chart("od", "individuals", 66, 80, {"we4": [70, 71], "we2": [71]}, now=3.0)
    book.observe_chart("wall", "individuals", 0, 80, {"we1": [65]}, now=3.0)
    assert [a.closed_at for a in book.alarms(include_closed=True)] == [1.5, 2.5, None, None]
    assert book.store.alarms.signals_over("od", 50) == {
        "individuals": {52: ["we1"], 70: ["we4"], 71: ["we2", "we4"]}}
    assert set(book.store.alarms.signals_over("od", 0)["individuals"]) == {10, 45, 52, 70, 71}
