"""The outbox enters exactly what is committed to a forwarded table, once armed; arming
enters the rows already stored; the link's own meta keys stay out; disarming stops it."""

from __future__ import annotations

from linewatch.domain.records import Limits
from linewatch.store.db import Store
from linewatch.store.outbox import FORWARDED, Outbox


def _tables(store: Store) -> set[str]:
    return {r[0] for r in store.query("SELECT tbl FROM outbox")}


def test_nothing_is_entered_until_armed(store: Store) -> None:
    outbox = Outbox(store)
    store.meta.set("alarm_flood", "")
    store.audit.append("config-loaded", "x.toml", {"sha256": "0"})
    assert not outbox.armed()
    assert outbox.newest() == 0


def test_arming_enters_what_is_stored_then_every_commit(store: Store) -> None:
    outbox = Outbox(store)
    store.audit.append("config-loaded", "x.toml", {"sha256": "0"})  # audit row + audit_head
    assert outbox.arm(now=1.0) == 2
    assert _tables(store) == {"audit", "meta"}
    before = outbox.newest()
    with store.transaction():
        store.audit.append("config-loaded", "y.toml", {"sha256": "1"})
    entries = outbox.after(before, 100)
    assert [(e.table, e.op) for e in entries] == [("audit", "put"), ("meta", "put")]
    assert entries[0].key == (2,)
    assert entries[1].key == ("audit_head",)


def test_a_rolled_back_change_enters_nothing(store: Store) -> None:
    outbox = Outbox(store)
    outbox.arm()
    before = outbox.newest()
    try:
        with store.transaction():
            store.meta.set("alarm_flood", "x")
            raise RuntimeError("abandon")
    except RuntimeError:
        pass
    assert outbox.newest() == before


def test_link_keys_stay_local_and_deletes_are_dropped(store: Store) -> None:
    outbox = Outbox(store)
    outbox.arm()
    before = outbox.newest()
    store.meta.set("plant-link", '{"state": "up", "since": 1}')
    assert outbox.newest() == before
    store.execute("INSERT INTO shelves VALUES ('od', 10.0, 'op', 'why')")
    store.execute("DELETE FROM shelves WHERE characteristic = 'od'")
    ops = [(e.table, e.op, e.key) for e in outbox.after(before, 10)]
    assert ops == [("shelves", "put", ("od",)), ("shelves", "drop", ("od",))]


def test_pruned_points_are_not_dropped_centrally() -> None:
    points = next(f for f in FORWARDED if f.table == "points")
    signals = next(f for f in FORWARDED if f.table == "signals")
    assert not points.drops and not signals.drops


def test_confirm_position_waiting_and_disarm(store: Store) -> None:
    outbox = Outbox(store)
    outbox.arm()
    store.history.record_limits(Limits("od", "individuals", 10.0, 10.3, 9.7, 0.1), now=5.0)
    newest = outbox.newest()
    assert outbox.waiting() == newest > 0
    outbox.confirm(newest)
    assert outbox.position() == newest and outbox.waiting() == 0
    assert outbox.after(0, 10) == []  # confirmed entries are dropped
    outbox.disarm()
    assert not outbox.armed()
    store.meta.set("alarm_flood", "y")
    assert outbox.newest() == 0 and outbox.position() == 0


def test_resend_enters_the_whole_store_again(store: Store) -> None:
    outbox = Outbox(store)
    store.audit.append("config-loaded", "x.toml", {"sha256": "0"})
    outbox.arm()
    outbox.confirm(outbox.newest())
    assert outbox.arm(resend=True) == 2
    assert outbox.position() == 0 and outbox.waiting() == 2
