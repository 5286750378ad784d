"""`linewatch audit verify|export`: check the hash chain of the audit trail, or write it out."""

from __future__ import annotations

import argparse
import sys

from linewatch.errors import LinewatchError


def parse_since(text: str, now: float | None = None) -> float:
    """Epoch seconds for `--since`: a duration back from now (8h) or an ISO date/time (a time
    without an offset is local time)."""
    import time
    from datetime import datetime

    from linewatch.durations import parse_duration

    now = time.time() if now is None else now
    try:
        return now - parse_duration(text)
    except ValueError:
        pass
    try:
        moment = datetime.fromisoformat(text.strip())
    except ValueError:
        raise LinewatchError(
            f"--since: {text!r} is neither a duration (8h, 30m) nor an ISO date/time"
        ) from None
    if moment.tzinfo is None:
        moment = moment.astimezone()
    return moment.timestamp()


def run(args: argparse.Namespace) -> int:
    """verify: exit 0 when intact, 1 when broken (naming the first broken entry); export: 0."""
    from linewatch.commands._store_args import open_existing

    since = parse_since(args.since) if getattr(args, "since", None) else None
    store, _config = open_existing(args)
    try:
        if args.audit_command == "verify":
            verdict = store.audit.verify()
            if verdict.ok:
                print(f"audit trail intact: {verdict.message}")
                return 0
            print(f"audit trail BROKEN at entry {verdict.first_broken}: {verdict.message}")
            return 1
        if args.audit_command == "export":
            sys.stdout.write(store.audit.export(since, args.format))
            return 0
        raise LinewatchError(f"unknown action {args.audit_command!r}")
    finally:
        store.close()
