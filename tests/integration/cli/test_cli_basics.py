"""The command line itself: help for every subcommand, the bare command, python -m."""

from __future__ import annotations

import subprocess
import sys

import pytest

SUBCOMMANDS = ["check", "watch", "alarms", "audit", "report", "simulate", "demo"]


def lw(*args: str, cwd=None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, timeout=60, cwd=cwd)


def test_help_lists_every_subcommand():
    res = lw("--help")
    assert res.returncode == 0
    for name in SUBCOMMANDS:
        assert name in res.stdout


@pytest.mark.parametrize("name", SUBCOMMANDS)
def test_every_subcommand_has_help(name):
    res = lw(name, "--help")
    assert res.returncode == 0 and res.stdout.startswith(f"usage: linewatch {name}")


def test_the_bare_command_without_a_config_here_says_how_to_start(tmp_path):
    res = lw(cwd=tmp_path)
    assert res.returncode == 2
    assert "linewatch demo" in res.stderr and "linewatch.toml" in res.stderr
    assert "Traceback" not in res.stderr
    lines = res.stderr.splitlines()  # one way to start a line, readable, no escaped breaks
    assert any(line.strip().startswith("linewatch demo ") for line in lines[1:])
    assert "\\x0a" not in res.stderr and len(lines) >= 5


def test_the_console_script_is_installed():
    import shutil
    from pathlib import Path

    exe = shutil.which("linewatch", path=str(Path(sys.executable).parent))
    assert exe is not None
    res = subprocess.run([exe, "--version"], capture_output=True, text=True, timeout=60)
    assert res.returncode == 0 and res.stdout.startswith("linewatch ")


def _subparsers(parser):
    import argparse

    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                yield name, sub
                for inner, deeper in _subparsers(sub):
                    yield f"{name} {inner}", deeper


def test_every_option_of_every_subcommand_says_what_it_does():
    from linewatch.cli.main import build_parser

    bare = []
    for name, sub in _subparsers(build_parser()):
        for action in sub._actions:
            if action.option_strings and action.dest != "help" and not action.help:
                bare.append(f"{name} {action.option_strings[-1]}")
    assert bare == []
