"""The alarm hook runs for each raised alarm with the alarm as JSON on its standard input, and a
hook that hangs is reported without holding up monitoring."""

from __future__ import annotations

import json
import sys
import time

from tests.integration.watch.helpers import (
    HEADER,
    records,
    rows_text,
    start_watch,
    stop,
    wait_caught_up,
)

BASE = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 3


def _config(tmp_path, log, hook: list[str], timeout: str = "5s"):
    cfg = tmp_path / "line.toml"
    cfg.write_text(
        f'[alarms]\nhook = {json.dumps(hook)}\nhook_timeout = "{timeout}"\n'
        f'[[feed]]\npaths = ["{log}"]\n'
    )
    return cfg


def test_the_hook_gets_each_raised_alarm_as_json(tmp_path):
    log = tmp_path / "line.csv"
    log.write_text(HEADER + "".join(rows_text(BASE)))
    seen = tmp_path / "seen.jsonl"
    writer = f"import sys; open({str(seen)!r}, 'a').write(sys.stdin.read().strip() + '\\n')"
    cfg = _config(tmp_path, log, [sys.executable, "-c", writer])
    proc = start_watch(["-c", str(cfg)], tmp_path / "state", "--baseline", "30", "--rules", "we1")
    wait_caught_up(tmp_path / "state", log)
    with log.open("a") as f:
        f.writelines(rows_text([14.0], start=30))
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline and not (seen.exists() and seen.read_text().strip()):
        time.sleep(0.05)
    stop(proc)
    alarms = [json.loads(line) for line in seen.read_text().splitlines()]
    assert {(a["chart"], a["rule"], a["first_index"]) for a in alarms} >= {
        ("individuals", "we1", 30)}
    assert all(a["state"] == "unacknowledged" for a in alarms)


def test_a_hanging_hook_is_reported_and_monitoring_goes_on(tmp_path):
    log = tmp_path / "line.csv"
    log.write_text(HEADER + "".join(rows_text(BASE)))
    cfg = _config(tmp_path, log, [sys.executable, "-c", "import time; time.sleep(60)"], "1s")
    proc = start_watch(["-c", str(cfg)], tmp_path / "state", "--baseline", "30", "--rules", "we1")
    wait_caught_up(tmp_path / "state", log)
    with log.open("a") as f:
        f.writelines(rows_text([14.0, 10.0], start=30))
    wait_caught_up(tmp_path / "state", log)
    with log.open("a") as f:  # rows after the hook started are still read at once
        f.writelines(rows_text([10.1, 9.9], start=32))
    wait_caught_up(tmp_path / "state", log, timeout=5)
    out, _ = stop(proc)  # stopping waits for the hook to reach its time limit and says so
    problems = [r for r in records(out) if r["type"] == "hook"]
    assert problems and "did not finish within 1s; killed" in problems[0]["problem"]
    summary = next(r for r in records(out) if r["type"] == "summary")
    assert summary["points"] == 34
