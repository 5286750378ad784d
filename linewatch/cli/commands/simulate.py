"""`linewatch simulate`: write the invented extrusion line's logs into a folder, live.

A fresh folder first gets a stretch of in-control history (stamped before the start) so limits
exist at once. When the folder already holds the line's logs, the run continues them with live
rows only, so no file's time stamps ever go backwards."""

from __future__ import annotations

import signal
import sys
import threading
from datetime import datetime
from pathlib import Path
from types import FrameType

from linewatch.cli.options import SimulateOptions
from linewatch.domain.errors import LinewatchError
from linewatch.domain.words import count


def run(options: SimulateOptions) -> int:
    """Write logs until --duration has passed or SIGINT/SIGTERM arrives; exit 0."""
    from linewatch.domain.durations import format_duration, parse_duration
    from linewatch.simulation.line import EXTRUSION_LINE, Note, generate
    from linewatch.simulation.writer import continue_after, existing_logs, write_feeds

    duration = None
    if options.duration is not None:
        try:
            duration = parse_duration(options.duration)
        except ValueError as exc:
            raise LinewatchError(f"--duration: {exc}") from None
    out = Path(options.out)
    if out.exists() and not out.is_dir():
        raise LinewatchError(f"--out: {out} exists and is not a folder")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise LinewatchError(f"--out: cannot create {out}: {exc.strerror}") from None

    stop = threading.Event()

    def request_stop(_signum: int, _frame: FrameType | None) -> None:
        stop.set()

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, request_stop)
        signal.signal(signal.SIGTERM, request_stop)

    start = datetime.now().astimezone()
    existing = existing_logs(out)
    after = continue_after(existing)
    if after is not None:  # earlier runs may have run ahead of the clock (--speed > 1)
        start = max(start, after)
    files = ", ".join(g.file for g in EXTRUSION_LINE.gauges)
    until = f" for {format_duration(duration)}" if duration is not None else " (Ctrl-C stops)"
    print(f"simulating the extrusion line into {out}: {files}{until}", flush=True)
    actions = generate(options.seed, options.rate, start)
    if existing:
        print("continuing the logs already there (live rows only, no history)", flush=True)
        actions = (a for a in actions if a.t >= 0)

    def show(note: Note) -> None:
        if note.t >= 0:
            stamp = f"+{format_duration(note.t)}"
            print(f"{stamp:>8}  {note.gauge:<5} {note.text}", flush=True)

    try:
        stats = write_feeds(
            out,
            actions,
            speed=options.speed,
            duration=duration,
            stop=stop,
            on_note=show,
        )
    except OSError as exc:
        raise LinewatchError(f"cannot write into {out}: {exc.strerror or exc}") from None
    rows = sum(stats.rows.values())
    junk = sum(stats.junk.values())
    print(
        f"wrote {count(rows, 'row')} and {count(junk, 'junk row')} in "
        f"{format_duration(stats.seconds)} ({count(stats.rotations, 'rotation')})",
        file=sys.stdout,
        flush=True,
    )
    return 0

