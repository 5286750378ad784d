"""The audit trail: an append-only table in which every entry carries the SHA-256 of the previous
entry's hash followed by its own canonical content, so an edited, deleted or reordered entry
breaks the chain from that point on.

The newest sequence number and hash are also kept in `meta`, so removing entries from the end
(which a chain alone cannot reveal) is detected too. Triggers refuse UPDATE and DELETE on the
table; the chain is what catches someone who removes the triggers first.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import time
from collections.abc import Iterator
from dataclasses import dataclass
from datetime import datetime
from typing import TYPE_CHECKING, Any

from linewatch.store.actor import current_actor

if TYPE_CHECKING:
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
)
_HEAD_KEY = "audit_head"
EXPORT_FIELDS = ("seq", "at", "time", "actor", "action", "subject", "payload", "hash")


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


@dataclass(frozen=True, slots=True)
class Verdict:
    """The outcome of `verify()`: ok, the first broken sequence number (or None), a message."""

    ok: bool
    first_broken: int | None
    message: str

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


class AuditTrail:
    """Append, verify and export the audit chain."""

    def __init__(self, store: Store) -> None:
        self.store = store

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
            last = conn.execute("SELECT seq, hash FROM audit ORDER BY seq DESC LIMIT 1").fetchone()
            seq, prev = (last[0] + 1, last[1]) if last else (1, GENESIS)
            digest = entry_hash(prev, seq, at, actor, action, subject, body)
            conn.execute(
                "INSERT INTO audit (seq, at, actor, action, subject, payload, prev_hash, hash) "
                "VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                (seq, at, actor, action, subject, body, prev, digest),
            )
            conn.execute(
                "INSERT INTO meta (key, value) VALUES (?, ?) "
                "ON CONFLICT (key) DO UPDATE SET value = excluded.value",
                (_HEAD_KEY, f"{seq}:{digest}"),
            )
        return AuditEntry(seq, at, actor, action, subject, body, prev, digest)

    def entries(self, since: float | None = None) -> list[AuditEntry]:
        """Entries with `at` >= since (all by default), in chain order."""
        rows = self.store.query(
            "SELECT seq, at, actor, action, subject, payload, prev_hash, hash FROM audit "
            "WHERE at >= ? ORDER BY seq",
            (-1e300 if since is None else since,),
        )
        return [AuditEntry(*tuple(r)) for r in rows]

    def verify(self) -> Verdict:
        """Walk the whole chain; name the first entry that was edited, removed or moved."""
        with self.store.snapshot():  # entries and head from one commit, whoever writes now
            entries = self.entries()
            head = self.store.get_meta(_HEAD_KEY)
        prev = GENESIS
        expected_seq = 1
        count = 0
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
            if entry_hash(prev, e.seq, e.at, e.actor, e.action, e.subject, e.payload) != e.hash:
                return Verdict(False, e.seq, f"entry {e.seq} ({e.action}) was altered")
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
        return Verdict(True, None, f"{count} entries, chain intact")

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
                    [e.seq, repr(e.at), stamp, e.actor, e.action, e.subject, e.payload, e.hash]
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
                }
                out.write(json.dumps(record, ensure_ascii=False) + "\n")
        return out.getvalue()
