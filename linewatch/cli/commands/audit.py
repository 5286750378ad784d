"""`linewatch audit verify|export`: check the hash chain of the audit trail, or write it out."""

from __future__ import annotations

import argparse
import sys
from typing import TYPE_CHECKING

from linewatch.domain.clock import parse_since
from linewatch.domain.errors import LinewatchError

if TYPE_CHECKING:
    from linewatch.store.db import Store




def _verify(store: Store, args: argparse.Namespace) -> int:
    """Print the verdict and the checks it rests on; 0 intact, 1 broken or not checkable."""
    from linewatch.store.anchors import read_anchor_file
    from linewatch.store.audit import load_key

    if args.key:
        store.audit.use_key(load_key(args.key))
    anchors = None
    if args.anchor:
        anchors = []
        for path in args.anchor:
            found = read_anchor_file(path)
            if not found:
                raise LinewatchError(
                    f"--anchor {path}: holds no audit anchor (a line beginning "
                    "'linewatch-audit-anchor v1'; an anchor file, or a shift report)"
                )
            anchors += found
    verdict = store.audit.verify(anchors)
    if verdict.ok:
        print(f"audit trail intact: {verdict.message}")
        print(f"checked: {verdict.checks} ({_LEVELS[verdict.checks]})")
        return 0
    where = f" at entry {verdict.first_broken}" if verdict.first_broken is not None else ""
    print(f"audit trail BROKEN{where}: {verdict.message}")
    return 1


_LEVELS = {
    "chain only": "accidental damage and naive edits are caught; a trail emptied, shortened or "
                  "re-hashed by someone with write access is not: give --anchor FILE",
    "chain + anchors": "also catches removal or rewriting before the newest anchor; a re-hash of "
                       "entries written since it is not caught",
    "chain + key": "also catches a re-hash by anyone without the key; a trail emptied or cut "
                   "short is not: give --anchor FILE",
    "chain + key + anchors": "catches edits, re-hashes without the key, and removal or "
                             "rewriting before the newest anchor",
}


def run(args: argparse.Namespace) -> int:
    """verify: exit 0 when intact, 1 when broken (naming the first broken entry); export: 0."""
    from linewatch.cli.commands._store_args import open_existing

    since = parse_since(args.since) if getattr(args, "since", None) else None
    store, _config = open_existing(args)
    try:
        if args.audit_command == "verify":
            return _verify(store, args)
        if args.audit_command == "export":
            sys.stdout.write(store.audit.export(since, args.format))
            return 0
        raise LinewatchError(f"unknown action {args.audit_command!r}")
    finally:
        store.close()
