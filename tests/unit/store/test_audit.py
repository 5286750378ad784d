"""The audit chain: each entry holds SHA-256(previous hash + its canonical content); an edit, a
deletion (inside or at the end) or a reordering made directly in the SQLite file is detected and
the first broken entry named. Hashes are recomputed here with hashlib from that definition."""

from __future__ import annotations

import csv
import hashlib
import io
import json
import sqlite3
from pathlib import Path

import pytest

from linewatch.store.audit import GENESIS, canonical_json
from linewatch.store.db import DB_NAME, Store


def fill(store: Store, n: int = 5) -> None:
    for k in range(n):
        store.audit.append("limits-set", f"od/xbar#{k}", {"ucl": 10.0 + k, "k": k}, at=100.0 + k,
                           actor="engineer")


def tamper(store: Store, *statements: str) -> None:
    """Edit the database file directly, as someone with file access could (triggers dropped)."""
    raw = sqlite3.connect(store.path)
    raw.execute("DROP TRIGGER IF EXISTS audit_no_update")
    raw.execute("DROP TRIGGER IF EXISTS audit_no_delete")
    for sql in statements:
        raw.execute(sql)
    raw.commit()
    raw.close()


def test_hash_is_sha256_of_previous_hash_and_canonical_content(store: Store) -> None:
    fill(store, 2)
    first, second = store.audit.entries()
    content = json.dumps(
        [1, 100.0, "engineer", "limits-set", "od/xbar#0", '{"k":0,"ucl":10.0}'],
        sort_keys=True, separators=(",", ":"), ensure_ascii=False,
    )
    assert first.payload == canonical_json({"ucl": 10.0, "k": 0})
    assert first.prev_hash == GENESIS
    assert first.hash == hashlib.sha256((GENESIS + content).encode()).hexdigest()
    assert second.prev_hash == first.hash


def test_intact_chain_verifies(store: Store) -> None:
    assert store.audit.verify().ok  # empty
    fill(store)
    ok, first_broken, message = store.audit.verify()
    assert (ok, first_broken) == (True, None)
    assert "5 entries" in message


def test_the_table_refuses_updates_and_deletes(store: Store) -> None:
    fill(store, 2)
    raw = sqlite3.connect(store.path)
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        raw.execute("UPDATE audit SET actor = 'someone else' WHERE seq = 1")
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        raw.execute("DELETE FROM audit WHERE seq = 1")
    raw.close()


def test_edited_entry_is_named(store: Store) -> None:
    fill(store)
    tamper(store, "UPDATE audit SET payload = '{\"k\":2,\"ucl\":99.0}' WHERE seq = 3")
    ok, first_broken, message = store.audit.verify()
    assert (ok, first_broken) == (False, 3)
    assert "altered" in message


def test_edited_entry_with_recomputed_own_hash_breaks_the_next_link(store: Store) -> None:
    fill(store)
    e = store.audit.entries()[1]
    content = canonical_json([e.seq, e.at, "intruder", e.action, e.subject, e.payload])
    forged = hashlib.sha256((e.prev_hash + content).encode()).hexdigest()
    tamper(store, f"UPDATE audit SET actor = 'intruder', hash = '{forged}' WHERE seq = 2")
    ok, first_broken, _ = store.audit.verify()
    assert (ok, first_broken) == (False, 3)


def test_deleted_entry_is_named(store: Store) -> None:
    fill(store)
    tamper(store, "DELETE FROM audit WHERE seq = 2")
    ok, first_broken, message = store.audit.verify()
    assert (ok, first_broken) == (False, 2)
    assert "missing" in message


def test_deleted_last_entry_is_detected(store: Store) -> None:
    fill(store)
    tamper(store, "DELETE FROM audit WHERE seq = 5")
    ok, first_broken, message = store.audit.verify()
    assert (ok, first_broken) == (False, 5)
    assert "removed" in message


def test_reordered_entries_are_detected(store: Store) -> None:
    fill(store)
    tamper(
        store,
        "UPDATE audit SET seq = -1 WHERE seq = 2",
        "UPDATE audit SET seq = 2 WHERE seq = 3",
        "UPDATE audit SET seq = 3 WHERE seq = -1",
    )
    ok, first_broken, _ = store.audit.verify()
    assert (ok, first_broken) == (False, 2)


def test_chain_survives_reopening(tmp_path: Path) -> None:
    with Store(tmp_path / "s") as s:
        fill(s, 3)
    with Store(tmp_path / "s") as s:
        fill(s, 2)
        assert s.audit.verify().ok
        assert [e.seq for e in s.audit.entries()] == [1, 2, 3, 4, 5]
    assert (tmp_path / "s" / DB_NAME).exists()


def test_export_jsonl_and_csv(store: Store) -> None:
    fill(store, 3)
    lines = store.audit.export(since=101.0, fmt="jsonl").splitlines()
    records = [json.loads(line) for line in lines]
    assert [r["seq"] for r in records] == [2, 3]
    assert records[0]["payload"] == {"k": 1, "ucl": 11.0}
    assert records[0]["actor"] == "engineer" and len(records[0]["hash"]) == 64
    rows = list(csv.DictReader(io.StringIO(store.audit.export(fmt="csv"))))
    assert [int(r["seq"]) for r in rows] == [1, 2, 3]
    assert json.loads(rows[2]["payload"]) == {"k": 2, "ucl": 12.0}
    assert float(rows[0]["at"]) == 100.0


def test_unknown_action_is_refused(store: Store) -> None:
    with pytest.raises(ValueError, match="unknown audit action"):
        store.audit.append("deleted-everything", "x")


def test_threads_appending_at_once_keep_one_chain(store: Store) -> None:
    import threading

    def work(k: int) -> None:
        for i in range(50):
            with store.transaction():
                store.audit.append("limits-set", f"t{k}", {"i": i}, actor="t")

    threads = [threading.Thread(target=work, args=(k,)) for k in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert len(store.audit.entries()) == 200
    assert store.audit.verify().ok


def test_processes_appending_at_once_keep_one_chain(tmp_path: Path) -> None:
    import subprocess
    import sys

    Store(tmp_path / "s").close()
    code = (
        "import sys\nfrom linewatch.store.db import Store\n"
        "s = Store(sys.argv[1], create=False)\n"
        "for i in range(100):\n"
        "    s.audit.append('limits-set', sys.argv[2], {'i': i}, actor='p')\n"
    )
    procs = [
        subprocess.Popen([sys.executable, "-c", code, str(tmp_path / "s"), name])
        for name in ("a", "b")
    ]
    assert [p.wait(60) for p in procs] == [0, 0]
    with Store(tmp_path / "s", create=False) as s:
        entries = s.audit.entries()
        assert len(entries) == 200 and s.audit.verify().ok
        assert {e.subject for e in entries} == {"a", "b"}


def test_verify_while_another_process_writes_never_reports_a_false_break(store: Store) -> None:
    """The entries and the head record must be read in one snapshot: a writer committing between
    the two reads used to look like "entries removed from the end"."""
    import subprocess
    import sys

    fill(store, 3)
    writer = subprocess.Popen(
        [sys.executable, str(Path(__file__).with_name("audit_writer.py")), str(store.directory)],
        stdout=subprocess.PIPE, text=True,
    )
    try:
        assert writer.stdout is not None and writer.stdout.readline().strip() == "writing"
        verdicts = [store.audit.verify() for _ in range(40)]
    finally:
        writer.terminate()
        writer.wait(timeout=10)
    assert len(store.audit.entries()) > 3  # the writer did write meanwhile
    broken = [v.message for v in verdicts if not v.ok]
    assert broken == []


# -- anchors and the key: defences against someone who can write the file ---------------------

def rehash_all(store: Store, edit_seq: int, new_actor: str) -> None:
    """What a writer without any key can do: edit one entry and recompute every plain SHA-256
    after it (from the published definition, with hashlib), head record included."""
    raw = sqlite3.connect(store.path)
    raw.execute("DROP TRIGGER IF EXISTS audit_no_update")
    rows = raw.execute(
        "SELECT seq, at, actor, action, subject, payload FROM audit ORDER BY seq").fetchall()
    prev = GENESIS
    for seq, at, actor, action, subject, payload in rows:
        actor = new_actor if seq == edit_seq else actor
        content = canonical_json([seq, at, actor, action, subject, payload])
        digest = hashlib.sha256((prev + content).encode()).hexdigest()
        raw.execute("UPDATE audit SET actor = ?, prev_hash = ?, hash = ?, key_id = NULL "
                    "WHERE seq = ?", (actor, prev, digest, seq))
        prev = digest
    raw.execute("UPDATE meta SET value = ? WHERE key = 'audit_head'", (f"{len(rows)}:{prev}",))
    raw.commit()
    raw.close()


def anchor_now(store: Store, why: str = "report") -> list:
    from linewatch.store.anchors import anchor_line, parse_anchors

    entries, head = store.audit.head()
    return parse_anchors(anchor_line(store.directory, entries, head, 1_000.0, why))


def test_a_recomputed_keyless_chain_passes_the_chain_check_alone(store: Store) -> None:
    fill(store)
    rehash_all(store, 2, "intruder")
    verdict = store.audit.verify()
    assert verdict.ok and verdict.checks == "chain only"  # the limit the README states


def test_an_anchor_reveals_a_rewrite_made_after_it(store: Store) -> None:
    fill(store)
    anchors = anchor_now(store)
    assert store.audit.verify(anchors).ok
    assert store.audit.verify(anchors).checks == "chain + anchors"
    rehash_all(store, 2, "intruder")
    verdict = store.audit.verify(anchors)
    assert not verdict.ok and verdict.first_broken == 5
    assert "rewritten" in verdict.message


def test_an_emptied_store_is_not_intact_when_an_anchor_counted_entries(tmp_path: Path) -> None:
    with Store(tmp_path / "state") as store:
        fill(store)
        anchors = anchor_now(store, "stop")
    (tmp_path / "state" / DB_NAME).write_bytes(b"")  # truncated to 0 bytes while stopped
    for extra in ("-wal", "-shm"):
        (tmp_path / "state" / (DB_NAME + extra)).unlink(missing_ok=True)
    with Store(tmp_path / "state", create=False) as store:
        assert store.audit.verify().ok  # the chain alone cannot tell
        verdict = store.audit.verify(anchors)
    assert not verdict.ok and verdict.first_broken == 1
    assert "records 5 entries but the trail holds 0" in verdict.message


def test_entries_appended_after_an_anchor_still_agree(store: Store) -> None:
    fill(store, 3)
    anchors = anchor_now(store)
    fill(store, 2)
    assert store.audit.verify(anchors).ok


def test_anchors_of_another_store_only_are_a_failed_check(store: Store, tmp_path: Path) -> None:
    from linewatch.store.anchors import anchor_line, parse_anchors

    fill(store)
    other = parse_anchors(anchor_line(tmp_path / "elsewhere", 5, GENESIS, 0.0, "report"))
    verdict = store.audit.verify(other)
    assert not verdict.ok and "none of the 1 anchors" in verdict.message


def test_keyed_entries_cannot_be_rehashed_without_the_key(store: Store) -> None:
    import hmac

    fill(store, 2)  # keyless, written before the key was configured
    store.audit.use_key(b"k" * 32)
    fill(store, 3)
    e = store.audit.entries()[3]
    content = canonical_json([e.seq, e.at, e.actor, e.action, e.subject, e.payload])
    # RFC 2104 HMAC with SHA-256, computed here with the standard library
    assert e.hash == hmac.new(b"k" * 32, (e.prev_hash + content).encode(),
                              hashlib.sha256).hexdigest()
    verdict = store.audit.verify()
    assert verdict.ok and verdict.checks == "chain + key"
    rehash_all(store, 4, "intruder")  # plain SHA-256 from entry 1 on, key markers dropped
    verdict = store.audit.verify()  # the verifier holds the key: nothing is signed with it
    assert not verdict.ok and "none of the 5 entries is signed with the key" in verdict.message
    store.audit.use_key(None)
    assert store.audit.verify().checks == "chain only"  # without the key it cannot be seen


def test_a_keyed_entry_edited_without_the_key_is_named(store: Store) -> None:
    store.audit.use_key(b"k" * 32)
    fill(store)
    raw = sqlite3.connect(store.path)
    raw.execute("DROP TRIGGER audit_no_update")
    raw.execute("UPDATE audit SET actor = 'intruder' WHERE seq = 3")
    raw.commit()
    raw.close()
    ok, first, message = store.audit.verify()
    assert (ok, first) == (False, 3) and "altered" in message
    store.audit.use_key(None)  # without the key: the links hold, the MACs cannot be checked
    verdict = store.audit.verify()
    assert verdict.ok and "could not be checked without their key" in verdict.message


def test_a_keyless_entry_after_keyed_ones_is_a_break(store: Store) -> None:
    store.audit.use_key(b"k" * 32)
    fill(store, 3)
    raw = sqlite3.connect(store.path)
    raw.execute("DROP TRIGGER audit_no_update")
    e = store.audit.entries()[2]
    content = canonical_json([e.seq, e.at, "intruder", e.action, e.subject, e.payload])
    forged = hashlib.sha256((e.prev_hash + content).encode()).hexdigest()
    raw.execute("UPDATE audit SET actor = 'intruder', hash = ?, key_id = NULL WHERE seq = 3",
                (forged,))
    raw.execute("UPDATE meta SET value = ? WHERE key = 'audit_head'", (f"3:{forged}",))
    raw.commit()
    raw.close()
    ok, first, message = store.audit.verify()
    assert (ok, first) == (False, 3) and "without the key" in message


def test_a_keyed_trail_refuses_keyless_appends(store: Store) -> None:
    from linewatch.domain.errors import LinewatchError

    store.audit.use_key(b"k" * 32)
    fill(store, 1)
    store.audit.use_key(None)
    with pytest.raises(LinewatchError, match="signed with a key"):
        fill(store, 1)
    assert len(store.audit.entries()) == 1


def test_export_says_which_entries_are_signed(store: Store) -> None:
    from linewatch.store.audit import key_id_of

    fill(store, 1)
    store.audit.use_key(b"k" * 32)
    fill(store, 1)
    records = [json.loads(x) for x in store.audit.export().splitlines()]
    assert [r["key_id"] for r in records] == [None, key_id_of(b"k" * 32)]
    rows = list(csv.DictReader(io.StringIO(store.audit.export(fmt="csv"))))
    assert [r["key_id"] for r in rows] == ["", key_id_of(b"k" * 32)]


def test_a_trail_re_signed_with_another_key_is_a_break_for_the_key_holder(store: Store) -> None:
    store.audit.use_key(b"the-plant-key-32-bytes-long-....")
    fill(store, 3)
    raw = sqlite3.connect(store.path)
    raw.execute("DROP TRIGGER audit_no_update")
    raw.execute("UPDATE audit SET key_id = 'ffffffffffffffff' WHERE seq >= 2")  # marker only
    raw.commit()
    raw.close()
    ok, first, message = store.audit.verify()
    assert (ok, first) == (False, 2) and "signed with another key" in message


def test_of_anchors_with_the_same_count_the_later_is_the_latest(store: Store) -> None:
    """A stop anchor after a periodic one with no entry between: verify names the stop."""
    from linewatch.store.anchors import anchor_line, parse_anchors

    fill(store, 3)
    entries, head = store.audit.head()
    text = "\n".join(anchor_line(store.directory, entries, head, at, why)
                     for at, why in ((1000.0, "every"), (2000.0, "stop")))
    verdict = store.audit.verify(parse_anchors(text))
    assert verdict.ok and verdict.anchors_compared == 2
    assert verdict.latest_anchor is not None and verdict.latest_anchor.why == "stop"
