"""The subgroup and attribute options as a user types them: one way of subgrouping at a time,
and `watch` saying plainly what it cannot read instead of charting it wrongly; a pass/fail
log watched."""

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


def test_watch_says_it_reads_results_from_delimited_logs_only(tmp_path: Path):
    log = tmp_path / "tester.jsonl"
    log.write_text('{"time": "2026-03-02T06:00:00", "result": "PASS"}\n')
    got = lw("watch", "--no-ui", "--state-dir", str(tmp_path / "state"), str(log),
             "--result", "result", "--subgroup-size", "5")
    assert got.returncode == 2
    assert "from delimited logs with a header" in got.stderr
    assert "Traceback" not in got.stderr


def test_watch_charts_a_pass_fail_log_and_alarms_once(tmp_path: Path):
    """Samples of 20 parts with 1 failure each, then one with 12: beyond p̄ + 3√(p̄(1 − p̄)/n)
    (Montgomery, p chart; the test data are ours)."""
    import signal
    import time

    log = tmp_path / "tester.csv"
    rows = ["time,sample,result"]
    for s in range(14):
        bad = 12 if s == 12 else 1
        rows += [f"2026-03-02T06:{s:02d}:{j:02d},S{s},{'NG' if j < bad else 'OK'}"
                 for j in range(20)]
    log.write_text("\n".join(rows) + "\n")
    proc = subprocess.Popen(
        [sys.executable, "-m", "linewatch", "watch", "--no-ui", "--state-dir",
         str(tmp_path / "state"), str(log), "--result", "result", "--subgroup-by", "sample",
         "--baseline", "10", "--poll", "0.2"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    time.sleep(6)
    proc.send_signal(signal.SIGTERM)
    out, err = proc.communicate(timeout=30)
    assert "Traceback" not in err
    assert "limits step with each subgroup's size" in out
    alarms = [line for line in out.splitlines() if line.startswith("ALARM")]
    assert len(alarms) == 1 and " p we1 " in alarms[0]
    assert "proportion nonconforming" in out and "Cp/Cpk do not apply" in out
