"""`linewatch simulate`: write the invented extrusion line's logs into a folder, live."""

from __future__ import annotations

import argparse
import signal
import sys
import threading
from datetime import datetime
from pathlib import Path
from types import FrameType

from linewatch.errors import LinewatchError


def run(args: argparse.Namespace) -> int:
    """Write logs until --duration has passed or SIGINT/SIGTERM arrives; exit 0."""
    from linewatch.durations import format_duration, parse_duration
    from linewatch.simulate import EXTRUSION_LINE, Note, generate
    from linewatch.simulation.writer import write_feeds

    if not args.rate > 0:
        raise LinewatchError(f"--rate must be more than 0 rows per second, got {args.rate}")
    if not args.speed > 0:
        raise LinewatchError(f"--speed must be more than 0, got {args.speed}")
    duration = None
    if args.duration is not None:
        try:
            duration = parse_duration(args.duration)
        except ValueError as exc:
            raise LinewatchError(f"--duration: {exc}") from None
    out = Path(args.out)
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
    files = ", ".join(g.file for g in EXTRUSION_LINE.gauges)
    until = f" for {format_duration(duration)}" if duration is not None else " (Ctrl-C stops)"
    print(f"simulating the extrusion line into {out}: {files}{until}", flush=True)

    def show(note: Note) -> None:
        if note.t >= 0:
            stamp = f"+{format_duration(note.t)}"
            print(f"{stamp:>8}  {note.gauge:<5} {note.text}", flush=True)

    try:
        stats = write_feeds(
            out,
            generate(args.seed, args.rate, start),
            speed=args.speed,
            duration=duration,
            stop=stop,
            on_note=show,
        )
    except OSError as exc:
        raise LinewatchError(f"cannot write into {out}: {exc.strerror or exc}") from None
    rows = sum(stats.rows.values())
    junk = sum(stats.junk.values())
    print(
        f"wrote {rows} rows and {junk} junk rows in {format_duration(stats.seconds)}"
        f" ({stats.rotations} rotations)",
        file=sys.stdout,
        flush=True,
    )
    return 0
