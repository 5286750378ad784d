"""Kinds and states are enums in the code, but what reaches the store, the audit trail, the
`alarms list` records and the hook is the same plain text as before they were: a state directory
written by an older linewatch reads the same, and scripts reading the jsonl need no change.

The expected strings are the stored format (the values linewatch has always written; the state
names are ISA-18.2's). The store is read with sqlite3 directly, not through linewatch.
"""

from __future__ import annotations

import json
import sqlite3

from linewatch.alarms.book import AlarmBook
from linewatch.domain.jsonl import dumps
from linewatch.domain.records import FeedEvent
from linewatch.store.db import Store


def _raise_one_of_each(book: AlarmBook) -> None:
    book.observe_spec("od", 0, [25.3], lsl=24.8, usl=25.2, now=1)  # out-of-spec
    book.observe_chart("od", "xbar", 0, 0, {"we1": [0]}, now=2)  # beyond-limits
    book.observe_chart("wall", "xbar", 0, 0, {"we4": [0]}, now=3)  # run-rule
    book.observe_feed(FeedEvent("stale", "/logs/scale.csv"), now=4)  # feed-health


def _rows(store: Store) -> list[tuple[str, str, str]]:
    raw = sqlite3.connect(store.path)
    try:
        return [tuple(r) for r in raw.execute(
            "SELECT kind, typeof(kind), rule FROM alarms ORDER BY id")]
    finally:
        raw.close()


def test_kinds_are_stored_as_the_same_text(book: AlarmBook) -> None:
    _raise_one_of_each(book)
    assert _rows(book.store) == [
        ("out-of-spec", "text", "usl"),
        ("beyond-limits", "text", "we1"),
        ("run-rule", "text", "we4"),
        ("feed-health", "text", "stale"),
    ]


def test_the_audit_trail_holds_the_same_json_text(book: AlarmBook) -> None:
    _raise_one_of_each(book)
    book.observe_chart("wall", "xbar", 1, 1, {"we1": [1]}, now=5)  # escalated to beyond-limits
    raw = sqlite3.connect(book.store.path)
    try:
        payloads = [str(p) for (p,) in raw.execute(
            "SELECT payload FROM audit WHERE action IN ('raised', 'escalated') ORDER BY seq")]
    finally:
        raw.close()
    assert [json.loads(p)["kind"] for p in payloads] == [
        "out-of-spec", "beyond-limits", "run-rule", "feed-health", "beyond-limits"]
    assert '"kind":"out-of-spec"' in payloads[0]  # the canonical JSON the hash chain covers


def test_list_records_and_hook_payloads_carry_plain_strings(book: AlarmBook) -> None:
    _raise_one_of_each(book)
    [spec, *_] = book.alarms()
    book.shelve(spec.id, 600, "die change", now=10)
    lines = [dumps(book.list_record(a, now=11)) for a in book.alarms()]
    records = [json.loads(line) for line in lines]
    assert [(r["kind"], r["state"]) for r in records] == [
        ("out-of-spec", "shelved"),
        ("beyond-limits", "unacknowledged"),
        ("run-rule", "unacknowledged"),
        ("feed-health", "unacknowledged"),
    ]
    # the hook's stdin is json.dumps of the payload (linewatch.alarms.hooks)
    sent = json.dumps(book.hook_payload(book.alarms()[1], now=11), default=str)
    assert '"kind": "beyond-limits"' in sent and '"state": "unacknowledged"' in sent
