"""New-baseline requests as rows: asked by anyone, taken up by the collector, looked up by exact
name, and brought over from the `meta` keys an older store kept them in."""

from __future__ import annotations

import json
import sqlite3
from pathlib import Path

import pytest

from linewatch.domain.errors import LinewatchError
from linewatch.store.db import DB_NAME, Store
from linewatch.store.schema import MIGRATIONS


def test_a_name_with_wildcard_characters_matches_only_itself(store: Store) -> None:
    """'_' and '%' are SQLite LIKE's wildcards and LIKE ignores ASCII case (SQLite docs): a
    request for 'od_1' must not be taken for 'odx1' or 'OD_1', nor 'od%' for 'od%x'."""
    names = ["od_1", "odx1", "OD_1", "od%", "od%x", "od"]
    for k, name in enumerate(names):
        store.requests.ask(name, k, f"reason {k}", actor="tester")
    for k, name in enumerate(names):
        mine = store.requests.of(name)
        assert [(r.characteristic, r.start_index) for r in mine] == [(name, k)]
        assert store.requests.waiting_start(name, 0) == k
    assert [r.characteristic for r in store.requests.pending()] == names  # in asking order


def test_a_newer_request_replaces_one_not_yet_taken_up(store: Store) -> None:
    first = store.requests.ask("od", 10, "die changed", actor="a", now=1.0)
    second = store.requests.ask("od", 12, "die changed, later point", actor="b", now=2.0)
    assert [r.id for r in store.requests.pending()] == [second]
    states = {r.id: r.state for r in store.requests.of("od")}
    assert states == {first: "replaced", second: "pending"}
    assert store.requests.waiting_start("od", 0) == 12


def test_a_blank_reason_is_refused_and_nothing_is_written(store: Store) -> None:
    with pytest.raises(LinewatchError, match="a reason is required"):
        store.requests.ask("od", 3, "   ")
    assert store.requests.of("od") == []


def test_a_carried_out_request_names_its_phase_until_the_limits_come(store: Store) -> None:
    rid = store.requests.ask("od", 30, "new die fitted", actor="operator1@10.1.2.3", now=5.0)
    store.requests.carried_out(rid, phase=1, start_index=30, now=6.0)
    assert store.requests.pending() == []
    req = store.requests.for_phase("od", 1)
    assert req is not None and req.reason == "new die fitted"
    assert req.actor == "operator1@10.1.2.3" and req.settled_at == 6.0
    assert store.requests.for_phase("od", 2) is None
    assert store.requests.waiting_start("od", 0) == 30  # phase 1 has no limits yet
    assert store.requests.waiting_start("od", 1) is None  # its limits are in


def test_a_refused_request_says_why_and_waits_no_more(store: Store) -> None:
    rid = store.requests.ask("od", 99, "too far", actor="x")
    store.requests.refused(rid, "a new phase can start at 0..60", now=3.0)
    assert store.requests.pending() == []
    (req,) = store.requests.of("od")
    assert req.state == "failed" and "0..60" in req.problem
    assert store.requests.waiting_start("od", 0) is None


def _store_at_version_8(directory: Path, meta: dict[str, str]) -> None:
    """A store as the version that kept requests in `meta` wrote it."""
    from linewatch.store.db import split_statements

    directory.mkdir()
    raw = sqlite3.connect(directory / DB_NAME)
    for script in MIGRATIONS[:8]:
        for statement in split_statements(script):
            raw.execute(statement)
    raw.execute("PRAGMA user_version = 8")
    raw.executemany("INSERT INTO meta (key, value) VALUES (?, ?)", list(meta.items()))
    raw.commit()
    raw.close()


def test_requests_kept_as_meta_keys_are_brought_over(tmp_path: Path) -> None:
    pending = {"start": 40, "reason": "gauge recalibrated", "actor": "op2"}
    phase = {"start": 30, "reason": "new die fitted", "actor": "op1"}
    directory = tmp_path / "old"
    _store_at_version_8(directory, {
        "baseline-request:od_1": json.dumps(pending),
        "baseline-request:odx1": "",  # taken up already (the old code blanked it)
        "phase-request:od_1:1": json.dumps(phase),
        "phase-request:width:12:3": json.dumps({**phase, "start": 7}),  # ':' and digits
        "audit_head": "5:abc",
        "alarm_flood": "",
    })
    with Store(directory, create=False) as store:
        assert store.schema_version == len(MIGRATIONS)
        (waiting,) = store.requests.pending()
        assert (waiting.characteristic, waiting.start_index, waiting.reason, waiting.actor) == (
            "od_1", 40, "gauge recalibrated", "op2")
        done = store.requests.for_phase("od_1", 1)
        assert done is not None and (done.start_index, done.reason, done.actor) == (
            30, "new die fitted", "op1")
        other = store.requests.for_phase("width:12", 3)
        assert other is not None and other.start_index == 7
        assert store.requests.of("odx1") == []
        keys = [r[0] for r in store.query("SELECT key FROM meta ORDER BY key")]
    assert keys == ["alarm_flood", "audit_head"]  # the other meta keys stay as they were
