"""`linewatch` with no subcommand: open ./linewatch.toml, or say how to start."""

from __future__ import annotations

import argparse
from pathlib import Path

from linewatch.domain.errors import LinewatchError

HOW_TO_START = """no ./linewatch.toml here. To start:
  linewatch demo                          a simulated line, nothing to set up
  linewatch watch 'logs/*.csv'            follow logs (add --no-ui for plain output)
  linewatch check log.csv                 chart a finished log
  linewatch watch -c line.toml            follow the feeds a config declares
Copy config/linewatch.example.toml to ./linewatch.toml to make this the default."""


def run(args: argparse.Namespace) -> int:
    path = Path("linewatch.toml")
    if not path.exists():
        raise LinewatchError(HOW_TO_START)
    from linewatch.cli.commands import watch
    from linewatch.cli.main import build_parser

    watch_args = build_parser().parse_args(["watch", "-c", str(path)])
    return watch.run(watch_args)
