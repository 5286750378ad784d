"""The core never imports the UI toolkit, and the fast paths stay free of heavy imports.

Checked in a fresh interpreter, by looking at sys.modules after the imports.
"""

from __future__ import annotations

import json
import pkgutil
import subprocess
import sys

import pytest

import linewatch

UI_PACKAGES = ("textual", "rich")


def _modules_after(code: str) -> set[str]:
    out = subprocess.run(
        [sys.executable, "-c", code + "\nimport sys, json; print(json.dumps(sorted(sys.modules)))"],
        capture_output=True, text=True, check=True,
    )
    return set(json.loads(out.stdout.strip().splitlines()[-1]))


def _core_modules() -> list[str]:
    names = []
    for info in pkgutil.walk_packages(linewatch.__path__, "linewatch."):
        if info.name.startswith("linewatch.faces.tui") or info.name == "linewatch.__main__":
            continue
        names.append(info.name)
    return names


CORE = _core_modules()


def test_the_core_list_holds_every_layer():
    """The walk finds the modules the parametrised test below must cover (not an empty list)."""
    for layer in ("domain", "engine", "config", "feeds", "store", "alarms", "pipeline",
                  "present", "report", "runtime", "simulation", "cli"):
        assert any(m.startswith(f"linewatch.{layer}.") for m in CORE), layer


@pytest.mark.parametrize("module", CORE)
def test_core_module_imports_neither_textual_nor_rich(module: str) -> None:
    """Each core module on its own, in a fresh interpreter, so a leak names its module."""
    loaded = _modules_after(f"import {module}")
    assert module in loaded
    leaked = sorted(m for m in loaded if m.split(".")[0] in UI_PACKAGES)
    assert leaked == []


def test_help_and_the_check_command_module_load_no_heavy_libraries():
    loaded = _modules_after(
        "import linewatch.cli.main as c\nc.build_parser().format_help()\n"
        "import linewatch.cli.commands.check"
    )
    heavy = {"textual", "rich", "scipy.stats", "pandas", "sqlite3", "watchdog"}
    assert not heavy & loaded


def test_a_whole_check_run_loads_neither_scipy_nor_the_ui():
    from pathlib import Path

    root = Path(__file__).resolve().parents[2]
    sample = root / "sample_feeds" / "extrusion_wide.csv"
    config = root / "config" / "extrusion_wide.toml"
    loaded = _modules_after(
        "import contextlib, io\nfrom linewatch.cli.main import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    main(['check', {str(sample)!r}, '-c', {str(config)!r}, '--format', 'jsonl'])"
    )
    assert "linewatch.engine.summary" in loaded  # the run really summarised
    assert not {m.split(".")[0] for m in loaded} & {"scipy", "pandas", "textual", "rich"}
