"""`linewatch report`: the shift handover report from the store, as Markdown, HTML or CSV."""

from __future__ import annotations

import sys
import time
from pathlib import Path
from typing import TYPE_CHECKING

from linewatch.cli.options import ReportOptions
from linewatch.domain.clock import parse_moment
from linewatch.domain.errors import LinewatchError

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.db import Store

DEFAULT_SPAN = "8h"


def period(options: ReportOptions, now: float) -> tuple[float, float]:
    """[since, until) from --since / --from / --to (default: the last 8 hours)."""
    from linewatch.domain.durations import parse_duration

    until = parse_moment(options.to, "--to") if options.to else now
    if options.from_:
        since = parse_moment(options.from_, "--from")
    else:
        try:
            seconds = parse_duration(options.since or DEFAULT_SPAN)
        except ValueError as exc:
            raise LinewatchError(f"--since: {exc}") from None
        since = until - seconds
    if since >= until:
        raise LinewatchError("the period is empty: its start is not before its end")
    return since, until


def _write_anchor(store: Store, config: Config | None, line: str) -> None:
    """Send the report's anchor to the config's anchor destinations (file, syslog; if any); a
    failure is told on stderr and does not stop the report."""
    if config is None:
        return
    from linewatch.store.anchors import sinks_for

    sinks = sinks_for(config.monitor)
    try:
        for problem in sinks.send(line) if sinks else []:
            print(f"linewatch: {problem}", file=sys.stderr)
    finally:
        sinks.close()


def run(options: ReportOptions) -> int:
    """Write the report to -o FILE or standard output; exit 0 (an empty period included)."""
    from linewatch.cli.commands._store_args import open_existing
    from linewatch.report.build import build_report

    now = time.time()
    since, until = period(options, now)
    store, config = open_existing(options)
    try:
        report = build_report(store, since, until, config, now)
        _write_anchor(store, config, report.audit_anchor)
    finally:
        store.close()
    if options.format == "html":
        from linewatch.report.as_html import render_html

        text = render_html(report)
    elif options.format == "csv":
        from linewatch.report.as_csv import render_csv

        text = render_csv(report)
    else:
        from linewatch.report.as_markdown import render_markdown

        text = render_markdown(report)
    if options.output:
        try:
            Path(options.output).write_text(text, encoding="utf-8")
        except OSError as exc:
            raise LinewatchError(f"-o: cannot write {options.output}: {exc.strerror}") from None
    else:
        sys.stdout.write(text)
    return 0
