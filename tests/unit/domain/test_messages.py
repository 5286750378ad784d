"""Messages read as sentences: counted nouns agree with their number, a missing config file is
named as such."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from linewatch.domain.words import count
from linewatch.feeds.health import FeedHealth


def test_counted_nouns_agree_with_their_number() -> None:
    assert count(1, "file") == "1 file" and count(2, "file") == "2 files"
    assert count(0, "new row") == "0 new rows" and count(1, "entry", "entries") == "1 entry"


def test_a_feed_that_resumes_with_one_row_says_one_new_row() -> None:
    health = FeedHealth(stale_after=10.0, stuck_repeats=10)
    health.rows_arrived("od.csv", 1, now=0.0)
    assert [e.kind for e in health.tick(now=20.0)] == ["stale"]
    health.rows_arrived("od.csv", 1, now=21.0)
    resumed = [e for e in health.tick(now=21.0) if e.kind == "resumed"]
    assert [e.detail for e in resumed] == ["1 new row"]


def test_a_missing_config_file_is_named_without_a_pseudo_key(tmp_path: Path) -> None:
    log = tmp_path / "a.csv"
    log.write_text("od\n" + "\n".join(str(10 + i % 3) for i in range(30)) + "\n")
    res = subprocess.run([sys.executable, "-m", "linewatch", "check", str(log), "--config",
                          str(tmp_path / "nosuch.toml")], capture_output=True, text=True,
                         timeout=60)
    assert res.returncode == 2
    assert res.stderr.strip() == f"linewatch: {tmp_path / 'nosuch.toml'}: no such config file"



def test_the_readme_states_the_python_that_the_package_requires() -> None:
    import re
    import tomllib

    root = Path(__file__).resolve().parents[3]
    needs = tomllib.loads((root / "pyproject.toml").read_text())["project"]["requires-python"]
    minimum = needs.removeprefix(">=")
    assert re.search(rf"needs Python {re.escape(minimum)} or newer",
                     (root / "README.md").read_text())
