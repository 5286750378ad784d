"""The audit trail: an append-only table in which every entry carries the SHA-256 of the previous
entry's hash followed by its own canonical content, so an edited, deleted or reordered entry
breaks the chain from that point on.

The newest sequence number and hash are also kept in `meta`, so removing entries from the end
(which a chain alone cannot reveal) is detected too. Triggers refuse UPDATE and DELETE on the
table; the chain is what catches someone who removes the triggers first.

A keyless chain can be recomputed by anyone who can write the file. Two defences reach further:
anchors (the head written outside the store, see `anchors.py`) reveal a trail shortened or
rewritten after the anchor, and a key held outside the state directory (`use_key`) turns each
new entry's hash into an HMAC-SHA256 that cannot be recomputed without it. Each entry records
the id of the key it was made with (NULL: keyless), so older keyless entries stay verifiable;
once an entry is keyed, a later keyless one is a break.
"""

from __future__ import annotations

import csv
import hashlib
import hmac
import io
import json
import time
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import json_safe
from linewatch.store.actor import current_actor

if TYPE_CHECKING:
    from linewatch.store.anchors import Anchor
    from linewatch.store.db import Store

GENESIS = "0" * 64
ACTIONS = (
    "raised",
    "acknowledged",
    "shelved",
    "unshelved",
    "returned-to-normal",
    "closed",
    "limits-set",
    "new-baseline",
    "config-loaded",
    "re-raised",
    "escalated",
    "flood-started",
    "flood-ended",
)
_HEAD_KEY = "audit_head"
EXPORT_FIELDS = ("seq", "at", "time", "actor", "action", "subject", "payload", "hash", "key_id")


@dataclass(frozen=True, slots=True)
class AuditEntry:
    """One entry of the chain; `payload` is canonical JSON text."""

    seq: int
    at: float
    actor: str
    action: str
    subject: str
    payload: str
    prev_hash: str
    hash: str
    key_id: str | None = None  # the key its hash is an HMAC with; None: plain SHA-256


@dataclass(frozen=True, slots=True)
class Verdict:
    """The outcome of `verify()`: ok, the first broken sequence number (or None), a message,
    and which checks could be made ("chain only", "chain + anchors", "chain + key", ...)."""

    ok: bool
    first_broken: int | None
    message: str
    checks: str = "chain only"
    entries: int = 0  # entries in the trail
    signed_checked: int = 0  # keyed entries whose MAC was recomputed with the key given
    anchors_compared: int = 0  # anchors of this store the trail was held to
    latest_anchor: Anchor | None = None  # the one recording the most entries

    def __iter__(self) -> Iterator[Any]:  # allows `ok, seq, message = trail.verify()`
        return iter((self.ok, self.first_broken, self.message))


def canonical_json(value: Any) -> str:
    """Deterministic JSON: sorted keys, no spaces, UTF-8 kept as text."""
    return json.dumps(value, sort_keys=True, separators=(",", ":"), ensure_ascii=False)


def entry_hash(
    prev_hash: str, seq: int, at: float, actor: str, action: str, subject: str, payload: str
) -> str:
    """SHA-256 of the previous hash followed by this entry's canonical content."""
    content = canonical_json([seq, at, actor, action, subject, payload])
    return hashlib.sha256((prev_hash + content).encode("utf-8")).hexdigest()


def key_id_of(key: bytes) -> str:
    """A short public name of a key (16 hex), telling which key made an entry's MAC."""
    return hashlib.sha256(b"linewatch audit key id\0" + key).hexdigest()[:16]


def entry_mac(
    key: bytes, prev_hash: str, seq: int, at: float, actor: str, action: str, subject: str,
    payload: str,
) -> str:
    """HMAC-SHA256 with `key` over the same bytes `entry_hash` hashes."""
    content = canonical_json([seq, at, actor, action, subject, payload])
    return hmac.new(key, (prev_hash + content).encode("utf-8"), hashlib.sha256).hexdigest()


def load_key(path: str) -> bytes:
    """The audit key from its file (surrounding white space dropped; at least 16 bytes)."""
    from pathlib import Path

    try:
        key = Path(path).expanduser().read_bytes().strip()
    except OSError as exc:
        raise LinewatchError(f"audit key file {path}: cannot read: {exc.strerror or exc}") from None
    if len(key) < 16:
        raise LinewatchError(
            f"audit key file {path}: holds {len(key)} bytes; use at least 16 random bytes "
            "(e.g. `head -c 32 /dev/urandom | base64 > FILE`)"
        )
    return key


class AuditTrail:
    """Append, verify and export the audit chain."""

    def __init__(self, store: Store) -> None:
        self.store = store
        self._key: bytes | None = None
        self.key_id: str | None = None

    @property
    def key(self) -> bytes | None:
        """The key new entries are signed with (None: keyless), to share with another
        connection of the same process."""
        return self._key

    def use_key(self, key: bytes | None) -> None:
        """MAC new entries (and check keyed ones) with `key`; None: keyless."""
        self._key = key
        self.key_id = key_id_of(key) if key is not None else None

    def _digest(self, prev: str, seq: int, at: float, actor: str, action: str, subject: str,
                body: str) -> str:
        if self._key is None:
            return entry_hash(prev, seq, at, actor, action, subject, body)
        return entry_mac(self._key, prev, seq, at, actor, action, subject, body)

    def head(self) -> tuple[int, str]:
        """(number of entries, hash of the newest) as the table holds them now."""
        row = self.store.query("SELECT seq, hash FROM audit ORDER BY seq DESC LIMIT 1")
        return (int(row[0][0]), str(row[0][1])) if row else (0, GENESIS)

    def first_at(self) -> float | None:
        """When the oldest entry was written (None for an empty trail): when this store began
        to keep a record, so rates over a period are taken over the time it was watched."""
        row = self.store.query("SELECT MIN(at) FROM audit")
        return float(row[0][0]) if row and row[0][0] is not None else None

    def append(
        self,
        action: str,
        subject: str,
        payload: dict[str, Any] | None = None,
        at: float | None = None,
        actor: str | None = None,
    ) -> AuditEntry:
        """Append one entry (inside the caller's transaction when there is one)."""
        if action not in ACTIONS:
            raise ValueError(f"unknown audit action {action!r}")
        at = time.time() if at is None else float(at)
        actor = actor or current_actor()
        body = canonical_json(payload or {})
        with self.store.transaction() as conn:
            last = conn.execute(
                "SELECT seq, hash, key_id FROM audit ORDER BY seq DESC LIMIT 1"
            ).fetchone()
            if last is not None and last[2] is not None and self._key is None:
                raise LinewatchError(
                    "this store's audit trail is signed with a key: use the config that names "
                    "it (monitor.audit_key_file), so this change is signed too"
                )
            seq, prev = (last[0] + 1, last[1]) if last else (1, GENESIS)
            digest = self._digest(prev, seq, at, actor, action, subject, body)
            conn.execute(
                "INSERT INTO audit (seq, at, actor, action, subject, payload, prev_hash, hash, "
                "key_id) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (seq, at, actor, action, subject, body, prev, digest, self.key_id),
            )
            self.store.meta.set(_HEAD_KEY, f"{seq}:{digest}")
        return AuditEntry(seq, at, actor, action, subject, body, prev, digest, self.key_id)

    def entries(self, since: float | None = None) -> list[AuditEntry]:
        """Entries with `at` >= since (all by default), in chain order."""
        rows = self.store.query(
            "SELECT seq, at, actor, action, subject, payload, prev_hash, hash, key_id FROM audit "
            "WHERE at >= ? ORDER BY seq",
            (-1e300 if since is None else since,),
        )
        return [AuditEntry(*tuple(r)) for r in rows]

    def verify(self, anchors: Sequence[Anchor] | None = None) -> Verdict:
        """Walk the whole chain; name the first entry that was edited, removed or moved. With
        `anchors` (heads recorded outside the store) also detect a trail shortened, emptied or
        rewritten after an anchor was made. The verdict says which checks could be made."""
        with self.store.snapshot():  # entries and head from one commit, whoever writes now
            entries = self.entries()
            head = self.store.meta.get(_HEAD_KEY)
        verdict = walk_chain(entries, head, self._key)
        if not verdict.ok:
            return verdict
        count, with_key, message = verdict.entries, verdict.signed_checked, verdict.message
        checks = verdict.checks.split(" + ") if verdict.checks != "chain only" else ["chain"]
        newest: Anchor | None = None
        mine: list[Anchor] = []
        if anchors is not None:
            broken = self._against_anchors(entries, anchors)
            if broken is not None:
                return broken
            mine = self.anchors_for(anchors)
            newest = max(reversed(mine), key=lambda a: a.entries)  # ties: the later one
            checks.append("anchors")
            message += (
                f"; agrees with {len(mine)} anchor{'s' if len(mine) != 1 else ''} "
                f"(the largest: {newest.entries} entries at {newest.at})"
            )
        label = " + ".join(checks) if len(checks) > 1 else "chain only"
        return Verdict(True, None, message, label, count, with_key, len(mine), newest)

    def anchors_for(self, anchors: Sequence[Anchor]) -> list[Anchor]:
        """The anchors that name this store's state directory."""
        from linewatch.store.anchors import store_key

        me = store_key(self.store.directory)
        return [a for a in anchors if a.store == me]

    def _against_anchors(self, entries: list[AuditEntry], anchors: Sequence[Anchor]) -> (
        Verdict | None
    ):
        """The first disagreement between the trail and the anchors of this store, or None."""
        mine = self.anchors_for(anchors)
        if not mine:
            named = sorted({a.store for a in anchors})
            return Verdict(
                False, None,
                (f"none of the {len(anchors)} anchors given is for this state directory "
                 f"(they name {', '.join(named)}): the store was moved or replaced, or the "
                 "wrong anchor file was given") if anchors else
                "no anchor was found in the files given",
            )
        count = len(entries)
        for a in sorted(mine, key=lambda a: a.entries):
            where = f"the anchor of {a.at} ({a.why}{', ' + a.source if a.source else ''})"
            if a.entries > count:
                return Verdict(
                    False, count + 1,
                    f"{where} records {a.entries} entries but the trail holds {count}: "
                    "the store is behind its anchor (truncated or rolled back to an older "
                    "copy, or replaced)",
                    entries=count, anchors_compared=len(mine), latest_anchor=a,
                )
            if a.entries and entries[a.entries - 1].hash != a.head:
                return Verdict(
                    False, a.entries,
                    f"entry {a.entries} is not the one {where} records: the trail was "
                    "rewritten up to there",
                    entries=count, anchors_compared=len(mine), latest_anchor=a,
                )
        return None

    def export(self, since: float | None = None, fmt: str = "jsonl") -> str:
        """The entries since `since` as CSV (with a header) or JSON lines."""
        if fmt not in ("csv", "jsonl"):
            raise ValueError(f"unknown export format {fmt!r}")
        out = io.StringIO()
        writer = csv.writer(out, lineterminator="\n") if fmt == "csv" else None
        if writer:
            writer.writerow(EXPORT_FIELDS)
        for e in self.entries(since):
            stamp = datetime.fromtimestamp(e.at).astimezone().isoformat(timespec="seconds")
            if writer:
                writer.writerow(
                    [e.seq, repr(e.at), stamp, e.actor, e.action, e.subject, e.payload, e.hash,
                     e.key_id or ""]
                )
            else:
                record = {
                    "seq": e.seq,
                    "at": e.at,
                    "time": stamp,
                    "actor": e.actor,
                    "action": e.action,
                    "subject": e.subject,
                    "payload": json.loads(e.payload),
                    "hash": e.hash,
                    "key_id": e.key_id,  # null: plain SHA-256, else the key of its HMAC
                }
                out.write(json_safe(json.dumps(record, ensure_ascii=False)) + "\n")
        return out.getvalue()


def walk_chain(entries: Sequence[AuditEntry], head: str | None, key: bytes | None) -> Verdict:
    """Walk a chain (in sequence order) and its recorded head (`<seq>:<hash>`, None when
    missing); with `key`, recompute the MACs of the entries signed with it. The one check of a
    chain, whether the entries come from the line's store or from the central database."""
    key_id = key_id_of(key) if key is not None else None
    prev = GENESIS
    expected_seq = 1
    count = 0
    keyed_from: int | None = None
    with_key = 0  # keyed entries whose MAC was recomputed
    foreign: set[str] = set()  # ids of keys we do not hold
    unchecked = 0  # keyed entries whose MAC we cannot recompute (links still checked)
    for e in entries:
        count += 1
        if e.seq != expected_seq:
            return Verdict(
                False,
                expected_seq,
                f"entry {expected_seq} is missing (the chain jumps to {e.seq})",
            )
        if e.prev_hash != prev:
            return Verdict(
                False, e.seq, f"entry {e.seq} does not follow entry {e.seq - 1} (link broken)"
            )
        fields = (prev, e.seq, e.at, e.actor, e.action, e.subject, e.payload)
        if e.key_id is None:
            if keyed_from is not None:
                return Verdict(
                    False, e.seq,
                    f"entry {e.seq} carries no key although entries from {keyed_from} on "
                    "were signed with one (re-hashed without the key)",
                )
            if entry_hash(*fields) != e.hash:
                return Verdict(False, e.seq, f"entry {e.seq} ({e.action}) was altered")
        else:
            keyed_from = e.seq if keyed_from is None else keyed_from
            if key is not None and e.key_id == key_id:
                if not hmac.compare_digest(entry_mac(key, *fields), e.hash):
                    return Verdict(False, e.seq, f"entry {e.seq} ({e.action}) was altered")
                with_key += 1
            elif key is not None:
                return Verdict(
                    False, e.seq,
                    f"entry {e.seq} is signed with another key (id {e.key_id}) than the one "
                    f"given (id {key_id}): a wrong key file, or the trail was re-signed "
                    "by someone else",
                )
            else:
                foreign.add(e.key_id)
                unchecked += 1
        prev = e.hash
        expected_seq += 1
    if head is not None:
        head_seq, _, head_hash = head.partition(":")
        if int(head_seq) != count or head_hash != prev:
            first = count + 1 if int(head_seq) > count else int(head_seq)
            return Verdict(
                False,
                first,
                f"the trail ends at entry {count} but entry {head_seq} was the last written "
                "(entries removed from the end)",
            )
    elif count:
        return Verdict(False, count, "the record of the newest entry is missing")
    if key is not None and count and not with_key:
        # a collector started with the key signs its first entry at once; a trail with
        # none signed has never seen the key or was re-hashed without it
        return Verdict(
            False, None,
            f"none of the {count} entries is signed with the key given: the trail was "
            "re-hashed without the key, or the key was never used on this store",
        )
    message = f"{count} entries, chain intact"
    checks = ["chain"]
    if with_key:
        checks.append("key")
        message += (f"; {with_key} {'entry' if with_key == 1 else 'entries'} signed with "
                    f"the key check{'s' if with_key == 1 else ''} out")
    if foreign:
        message += (
            f"; {unchecked} signed entries could not be checked without their key "
            f"(id {', '.join(sorted(foreign))}): only their links were"
        )
    label = " + ".join(checks) if len(checks) > 1 else "chain only"
    return Verdict(True, None, message, label, count, with_key)

