"""The subgroup and attribute options as a user types them: one way of subgrouping at a time,
and `watch` saying plainly what it does not chart yet instead of charting it wrongly."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path


def lw(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, timeout=60)


def test_two_ways_of_subgrouping_are_a_usage_error(tmp_path: Path):
    log = tmp_path / "od.csv"
    log.write_text("sample,od\nS1,1\n")
    got = lw("check", str(log), "--subgroup-size", "5", "--subgroup-by", "sample")
    assert got.returncode == 2
    assert "not allowed with argument" in got.stderr  # argparse's own words


def test_watch_says_it_cannot_chart_attribute_data_yet(tmp_path: Path):
    log = tmp_path / "tester.csv"
    log.write_text("time,result\n2026-03-02T06:00:00,PASS\n")
    got = lw("watch", "--no-ui", "--state-dir", str(tmp_path / "state"), str(log),
             "--result", "result", "--subgroup-size", "5")
    assert got.returncode == 2
    assert "watch cannot chart --result yet" in got.stderr
    assert "Traceback" not in got.stderr
