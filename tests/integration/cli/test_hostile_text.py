"""Text from outside (log keys, time fields, file names, notes, reasons, config keys) never
reaches the terminal raw: every command's stdout and stderr hold no control character but tab
and line feed, the hostile text is still shown (escaped, `\\x1b`), and jsonl stays valid JSON
with the exact original text.

The hostile key is a probe's: ESC [ 2 J clears the screen, OSC 0 retitles
the window and OSC 52 writes the clipboard (xterm control sequences, common practice).
"""

from __future__ import annotations

import json
import os
import re
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from tests.integration.watch.helpers import wait_caught_up

HOSTILE_KEY = "od\u001b[2J\u001b]0;PWNED\u0007\u001b]52;c;aGk=\u0007"
HOSTILE_FILE = "R\u001b]0;PWNED\u0007\u009b2J.csv"  # ends with a C1 CSI
SHOWN_KEY = "od\\x1b[2J\\x1b]0;PWNED\\x07\\x1b]52;c;aGk=\\x07"  # what a reader sees instead
SHOWN_FILE = "R\\x1b]0;PWNED\\x07\\x9b2J.csv"


def control_chars(text: str) -> list[str]:
    """Every character a terminal may act on: C0 except tab and line feed, DEL and C1."""
    return [c for c in text if (ord(c) < 0x20 and c not in "\t\n") or 0x7F <= ord(c) <= 0x9F]


def lw(*args: str, timeout: float = 60) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, timeout=timeout)


def assert_clean(result: subprocess.CompletedProcess[str]) -> None:
    assert control_chars(result.stdout) == [], result.stdout
    assert control_chars(result.stderr) == [], result.stderr


def _values(n: int) -> list[float]:
    """A steady series with one far outlier at point 30, so every command has a signal."""
    return [10.0 + (0.05 if i % 2 else -0.05) + (0.01 * (i % 5)) + (3.0 if i == 30 else 0.0)
            for i in range(n)]


@pytest.fixture
def logs(tmp_path: Path) -> tuple[Path, Path]:
    jsonl = tmp_path / "hostile.jsonl"
    rows = [json.dumps({"time": f"2026-03-02T06:00:{i:02d}\u001b]0;T\u0007", HOSTILE_KEY: v})
            for i, v in enumerate(_values(40))]
    rows.append(json.dumps({HOSTILE_KEY: "bad\u001b]0;V\u0007\u009b2J"}))  # a junk value
    jsonl.write_text("\n".join(rows) + "\n")
    csv = tmp_path / HOSTILE_FILE
    lines = ["time,width"] + [f"2026-03-02T06:00:{i:02d},{v}" for i, v in enumerate(_values(40))]
    csv.write_text("\n".join(lines) + "\n")
    return jsonl, csv


def test_check_text_shows_hostile_names_escaped(logs: tuple[Path, Path]) -> None:
    result = lw("check", *map(str, logs))
    assert result.returncode == 1, result.stderr  # the outlier is a signal
    assert_clean(result)
    assert f"== {SHOWN_KEY}:" in result.stdout
    assert f"{SHOWN_FILE}:32" in result.stdout  # the outlier's row (header is line 1)
    assert "rejected rows: 1" in result.stdout


def test_check_jsonl_is_valid_json_with_the_exact_names(logs: tuple[Path, Path]) -> None:
    result = lw("check", "--format", "jsonl", *map(str, logs))
    assert_clean(result)
    records = [json.loads(line) for line in result.stdout.splitlines()]
    names = {r["characteristic"] for r in records if r["type"] == "limits"}
    assert names == {HOSTILE_KEY, "width"}
    assert any(r.get("file", "").endswith(HOSTILE_FILE) for r in records)  # C1 as \\u009b


def test_watch_alarms_and_report_show_hostile_text_escaped(
    logs: tuple[Path, Path], tmp_path: Path
) -> None:
    state = tmp_path / "state"
    proc = subprocess.Popen(
        [sys.executable, "-m", "linewatch", "watch", "--no-ui", "--state-dir", str(state),
         str(logs[0])],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
        env={**os.environ, "PYTHONUNBUFFERED": "1"},
    )
    try:
        wait_caught_up(state, logs[0])
    finally:
        proc.send_signal(signal.SIGTERM)
        out, err = proc.communicate(timeout=30)
    watched = subprocess.CompletedProcess(proc.args, proc.returncode, out, err)
    assert_clean(watched)
    assert f"SIGNAL  {SHOWN_KEY} individuals rule we1 point 30" in out
    assert "at 2026-03-02T06:00:30\\x1b]0;T\\x07" in out  # the time field, escaped

    listed = lw("alarms", "list", "--state-dir", str(state))
    assert_clean(listed)
    assert SHOWN_KEY in listed.stdout

    ids = [str(json.loads(line)["id"]) for line in
           lw("alarms", "list", "--format", "jsonl", "--state-dir", str(state)).stdout.split()]
    refused = lw("alarms", "ack", ids[0], "--reason", "x\u001b]0;R\u0007", "--state-dir",
                 str(state))
    assert refused.returncode == 2
    assert_clean(refused)
    assert refused.stderr.count("\n") == 1 and "x\\x1b]0;R\\x07" in refused.stderr

    acked = lw("alarms", "ack", "--characteristic", HOSTILE_KEY, "--reason", "no cause found",
               "--note", "n\u001b]52;c;aGk=\u0007", "--state-dir", str(state))
    assert acked.returncode == 0, acked.stderr
    assert_clean(acked)
    assert SHOWN_KEY in acked.stdout

    report = lw("report", "--state-dir", str(state))
    assert report.returncode == 0, report.stderr
    assert_clean(report)
    # the Markdown report also backslash-escapes Markdown's own characters ([, ], ...)
    unescaped = re.sub(r"\\([\[\]()*_`<>|#!{}~+.-])", r"\1", report.stdout)
    assert SHOWN_KEY in unescaped
    assert "n\\x1b]52;c;aGk=\\x07" in unescaped  # the note


def test_one_line_errors_show_file_names_and_config_keys_escaped(tmp_path: Path) -> None:
    missing = lw("check", str(tmp_path / HOSTILE_FILE))
    assert missing.returncode == 2
    assert_clean(missing)
    assert SHOWN_FILE in missing.stderr and missing.stderr.count("\n") == 1

    config = tmp_path / "line.toml"
    config.write_text('"k\\u001b]0;CFG\\u0007" = 1\n')
    bad = lw("check", "-c", str(config), str(tmp_path / "none.csv"))
    assert bad.returncode == 2
    assert_clean(bad)
    assert "k\\x1b]0;CFG\\x07" in bad.stderr

    usage = lw("check", "--format", "\u001b]0;ARG\u0007", "x.csv")  # argparse echoes it
    assert usage.returncode == 2
    assert_clean(usage)
    assert "\\x1b]0;ARG\\x07" in usage.stderr


def test_an_unexpected_error_keeps_its_traceback_but_escaped(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    from linewatch.cli import main as cli
    from linewatch.cli.commands import check

    def planted_fault(args: object) -> int:
        raise RuntimeError(f"cannot read {HOSTILE_FILE}")

    monkeypatch.setattr(check, "run", planted_fault)
    assert cli.main(["check", "x.csv"]) == 1  # as an uncaught exception would
    err = capsys.readouterr().err
    assert "Traceback" in err and f"RuntimeError: cannot read {SHOWN_FILE}" in err
    assert control_chars(err) == []
