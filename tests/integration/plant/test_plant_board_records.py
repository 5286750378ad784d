"""`linewatch plant board --no-ui`: each line's record from a real central database, held to
what the line's own store says (`linewatch alarms list` on the line PC), after real collectors
forwarded their rows."""

from __future__ import annotations

import json
import subprocess
import sys
from collections import Counter
from pathlib import Path

from tests.integration.plant.plant_lines import Line, wait_until


def run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, timeout=60, check=False)


def own_waiting(line: Line) -> dict[str, int]:
    """Unacknowledged, unshelved open alarms by priority, as the line's own store lists them."""
    out = run("alarms", "list", "--format", "jsonl", "--state-dir", str(line.state))
    assert out.returncode == 0, out.stderr
    records = [json.loads(r) for r in out.stdout.splitlines() if r.strip()]
    calling = [r for r in records if r.get("type", "alarm") == "alarm"
               and r["state"] in ("unacknowledged", "returned-unacknowledged")]
    return {str(p): n for p, n in sorted(Counter(r["priority"] for r in calling).items())}


def test_each_line_record_agrees_with_the_lines_own_store(plant_db: str, tmp_path: Path) -> None:
    assert run("plant", "init", plant_db).returncode == 0
    lines = [Line(tmp_path / "a", "line-a", plant_db, seed=5),
             Line(tmp_path / "b", "line-b", plant_db, seed=6)]
    lines[0].write(160)  # a shift after 100 rows: alarms
    lines[1].write(40)
    for line in lines:
        line.start()
    try:
        for line in lines:
            wait_until(line.read_all, 90, f"{line.name} read its log")
            wait_until(lambda line=line: line.waiting() == 0, 90, f"{line.name} forwarded")
        out = run("plant", "board", "--url", plant_db, "--no-ui", "--format", "jsonl")
        assert out.returncode == 0, out.stderr
        records = {r["line"]: r for r in map(json.loads, out.stdout.splitlines())}
        assert sorted(records) == ["line-a", "line-b"]
        for line in lines:
            r = records[line.name]
            assert r["waiting"] == own_waiting(line)
            assert r["link"] == "up"
            assert (r["state"] == "alarm") == bool(r["waiting"])
        a = records["line-a"]
        assert a["state"] == "alarm" and a["most_urgent"]["characteristic"] == "od"
        assert str(a["most_urgent"]["priority"]) == min(a["waiting"], key=int)
        text = run("plant", "board", "--url", plant_db, "--no-ui")
        assert text.returncode == 0 and "line-a" in text.stdout and "line-b" in text.stdout
        assert "postgres" not in text.stdout + text.stderr  # never the URL, nor its password
    finally:
        for line in lines:
            line.stop()
