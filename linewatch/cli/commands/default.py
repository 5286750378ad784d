"""`linewatch` with no subcommand: open ./linewatch.toml, or say how to start."""

from __future__ import annotations

import sys
from pathlib import Path

from linewatch.cli.options import DefaultOptions, WatchOptions
from linewatch.domain import exit_codes

HOW_TO_START = """no ./linewatch.toml here. To start:
  linewatch demo                          a simulated line, nothing to set up
  linewatch watch 'logs/*.csv'            follow logs (add --no-ui for plain output)
  linewatch check log.csv                 chart a finished log
  linewatch watch -c line.toml            follow the feeds a config declares
Copy config/linewatch.example.toml to ./linewatch.toml to make this the default."""


def run(options: DefaultOptions) -> int:
    """`linewatch watch -c linewatch.toml`, when that file is here; else how to start, on
    several lines (our own text: an error's one escaped line would run it together) and the
    usage exit code."""
    path = Path("linewatch.toml")
    if not path.exists():
        print(f"linewatch: {HOW_TO_START}", file=sys.stderr)
        return exit_codes.USAGE
    from linewatch.cli.commands import watch

    return watch.run(WatchOptions(config=str(path)))
