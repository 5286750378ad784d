"""`linewatch audit verify|export`: check the hash chain of the audit trail, or write it out."""

from __future__ import annotations

import sys
from typing import TYPE_CHECKING

from linewatch.cli.options import AuditOptions, ExportOptions, VerifyOptions
from linewatch.domain.clock import parse_since
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.anchors import Anchor
    from linewatch.store.audit import Verdict
    from linewatch.store.db import Store


def _gather_anchors(options: VerifyOptions, config: Config | None) -> tuple[
    list[Anchor] | None, list[str], str
]:
    """The anchors to hold the trail to: the config's anchor file (when it names one) and every
    --anchor, each file read once. Returns (anchors or None, the sources read, why there are
    none). An --anchor that cannot be read or holds no anchor is a usage error; a configured
    file not written yet is reported, not an error."""
    from pathlib import Path

    from linewatch.store.anchors import parse_anchors, read_anchor_file

    anchors: list[Anchor] = []
    sources: list[str] = []
    seen: set[Path] = set()
    missing = "no anchor file is configured (monitor.audit_anchor_file) and no --anchor given"
    configured = config.monitor.audit_anchor_file if config is not None else None
    if configured:
        path = Path(configured).expanduser()
        seen.add(path.resolve())
        try:
            found = parse_anchors(path.read_text(encoding="utf-8", errors="replace"), str(path))
        except FileNotFoundError:
            found = []
            missing = f"the configured anchor file {path} does not exist"
        except OSError as exc:
            raise LinewatchError(
                f"monitor.audit_anchor_file {path}: cannot read: {exc.strerror or exc}"
            ) from None
        else:
            missing = f"the configured anchor file {path} holds no anchor yet"
        if found:
            anchors += found
            sources.append(f"{path} (configured)")
    for given in options.anchor:
        if Path(given).expanduser().resolve() in seen:
            continue
        seen.add(Path(given).expanduser().resolve())
        found = read_anchor_file(given)
        if not found:
            raise LinewatchError(
                f"--anchor {given}: holds no audit anchor (a line beginning "
                "'linewatch-audit-anchor v1'; an anchor file, or a shift report)"
            )
        anchors += found
        sources.append(given)
    return (anchors or None), sources, missing


def _check_lines(store: Store, verdict: Verdict, key_given: bool, sources: list[str],
                 missing: str) -> list[str]:
    """One plain line per check: what was compared, and what could not be detected."""
    lines = []
    if verdict.ok:
        lines.append(f"  chain: intact, {verdict.entries} entries linked from the first")
    if verdict.signed_checked:
        n = verdict.signed_checked
        lines.append(f"  key: used (id {store.audit.key_id}); {n} signed "
                     f"{'entry checks' if n == 1 else 'entries check'} out, so nobody without "
                     "the key re-hashed them")
    elif not key_given:
        lines.append("  key: no key given (monitor.audit_key_file or --key): a trail edited "
                     "and re-hashed by someone with write access passes the chain check")
    if sources:
        latest = verdict.latest_anchor
        n = verdict.anchors_compared
        text = (f"  anchors: {n} anchor{'s' if n != 1 else ''} of this store from "
                f"{', '.join(sources)}")
        if latest is not None and verdict.ok:
            text += f"; the latest ({latest.entries} entries at {latest.at}) matches the trail"
        elif latest is not None:
            text += (f"; the one of {latest.at} ({latest.entries} entries) does not match the "
                     "trail")
        lines.append(text)
    else:
        lines.append(f"  anchors: none available ({missing}): a truncated or re-hashed store "
                     "could not be detected")
    return lines


def _verify(store: Store, options: VerifyOptions, config: Config | None) -> int:
    """Print the verdict and the checks it rests on; 0 intact, 1 broken or not checkable."""
    from linewatch.store.audit import load_key

    if options.key:
        store.audit.use_key(load_key(options.key))
    anchors, sources, missing = _gather_anchors(options, config)  # before the trail is read:
    verdict = store.audit.verify(anchors)  # an anchor written meanwhile is never ahead of it
    details = _check_lines(store, verdict, store.audit.key is not None, sources, missing)
    if verdict.ok:
        print(f"audit trail intact: {verdict.message}")
        print("\n".join(details))
        print(f"checked: {verdict.checks} ({_LEVELS[verdict.checks]})")
        return 0
    where = f" at entry {verdict.first_broken}" if verdict.first_broken is not None else ""
    print(f"audit trail BROKEN{where}: {verdict.message}")
    print("\n".join(details))
    return 1


def _verify_central(options: VerifyOptions) -> int:
    """`audit verify --plant URL --line NAME`: the line's chain as the central database holds
    it; 0 intact, 1 broken."""
    from linewatch.plant.audit_copy import verify_central
    from linewatch.plant.central import session
    from linewatch.plant.url import redact
    from linewatch.store.audit import load_key

    if not options.plant or not options.line:
        raise LinewatchError("--plant URL and --line NAME go together")
    if options.anchor:
        raise LinewatchError("--anchor checks a line's own store; leave it out with --plant")
    key_file = options.key
    if key_file is None and options.config:
        from linewatch.config.loading import load_config

        key_file = load_config(options.config).monitor.audit_key_file
    key = load_key(key_file) if key_file else None
    with session(options.plant) as conn:
        verdict = verify_central(conn, options.line, key)
    where = f"line {visible(options.line)} in {redact(options.plant)}"
    if verdict.ok:
        print(f"audit trail intact ({where}): {verdict.message}")
        if key is None:
            print("  key: no key given (--key or -c CONFIG with monitor.audit_key_file): "
                  "signed entries were checked by their links only")
        print(f"checked: {verdict.checks}, as forwarded by the line")
        return 0
    at = f" at entry {verdict.first_broken}" if verdict.first_broken is not None else ""
    print(f"audit trail BROKEN{at} ({where}): {verdict.message}")
    return 1


_LEVELS = {
    "chain only": "accidental damage and naive edits are caught; a trail emptied, shortened or "
                  "re-hashed by someone with write access is not: set "
                  "monitor.audit_anchor_file or give --anchor FILE",
    "chain + anchors": "also catches a trail truncated, rolled back or rewritten before the "
                       "newest anchor; a re-hash of entries written since it is not caught",
    "chain + key": "also catches a re-hash by anyone without the key; a trail emptied, cut "
                   "short or rolled back is not: set monitor.audit_anchor_file or give "
                   "--anchor FILE",
    "chain + key + anchors": "catches edits, re-hashes without the key, and a trail "
                             "truncated, rolled back or rewritten before the newest anchor",
}


def run(options: AuditOptions) -> int:
    """verify: exit 0 when intact, 1 when broken (naming the first broken entry); export: 0."""
    from linewatch.cli.commands._store_args import open_existing

    if isinstance(options, VerifyOptions) and (options.plant or options.line):
        return _verify_central(options)
    since = None
    if isinstance(options, ExportOptions) and options.since:
        since = parse_since(options.since)  # a bad --since changes nothing: before the store
    store, config = open_existing(options)
    try:
        match options:
            case VerifyOptions():
                return _verify(store, options, config)
            case ExportOptions():
                sys.stdout.write(store.audit.export(since, options.format))
                return 0
    finally:
        store.close()
