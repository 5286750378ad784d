"""The alarm hook: real child processes get the alarm as JSON on stdin; failures and hangs are
reported and never block the caller."""

from __future__ import annotations

import json
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

import pytest

from linewatch.hooks import HookOutcome, HookRunner

ALARM = {"id": 7, "kind": "beyond-limits", "characteristic": "od", "rule": "we1"}


def collect() -> tuple[list[HookOutcome], threading.Event, Callable[[HookOutcome], None]]:
    outcomes: list[HookOutcome] = []
    done = threading.Event()

    def on_outcome(o: HookOutcome) -> None:
        outcomes.append(o)
        done.set()

    return outcomes, done, on_outcome


def test_hook_receives_the_alarm_as_json_on_stdin(tmp_path: Path) -> None:
    out = tmp_path / "got.json"
    code = "import sys, pathlib; pathlib.Path(sys.argv[1]).write_text(sys.stdin.read())"
    outcomes, done, on_outcome = collect()
    runner = HookRunner([sys.executable, "-c", code, str(out)], 10, on_outcome)
    runner.fire(ALARM)
    assert done.wait(10)
    assert outcomes[0].ok and outcomes[0].alarm_id == 7
    assert json.loads(out.read_text()) == ALARM


def test_arguments_are_not_interpreted_by_a_shell(tmp_path: Path) -> None:
    out = tmp_path / "argv.json"
    tricky = "$(touch pwned); `rm -rf x` && echo hi > y"
    code = (
        "import sys, json, pathlib; "
        "pathlib.Path(sys.argv[1]).write_text(json.dumps(sys.argv[2:]))"
    )
    runner = HookRunner([sys.executable, "-c", code, str(out), tricky], 10)
    thread = runner.fire(ALARM)
    assert thread is not None
    runner.wait(10)
    assert json.loads(out.read_text()) == [tricky]
    assert not (Path.cwd() / "pwned").exists()
    with pytest.raises(TypeError):
        HookRunner("notify-send alarm")


def test_failing_hook_is_reported_with_its_last_words() -> None:
    code = (
        "import sys; sys.stdin.read(); "
        "print('stack light offline', file=sys.stderr); sys.exit(3)"
    )
    outcomes, done, on_outcome = collect()
    HookRunner([sys.executable, "-c", code], 10, on_outcome).fire(ALARM)
    assert done.wait(10)
    assert not outcomes[0].ok
    assert "exited with 3" in outcomes[0].message
    assert "stack light offline" in outcomes[0].message


def test_missing_program_is_reported(tmp_path: Path) -> None:
    outcomes, done, on_outcome = collect()
    HookRunner([str(tmp_path / "no-such-hook")], 10, on_outcome).fire(ALARM)
    assert done.wait(10)
    assert not outcomes[0].ok and "cannot start" in outcomes[0].message


def test_hanging_hook_is_killed_at_the_time_limit_without_blocking() -> None:
    # The hook starts a grandchild that would keep stderr open, then hangs itself.
    code = (
        "import subprocess, sys, time; "
        "subprocess.Popen([sys.executable, '-c', 'import time; time.sleep(60)']); time.sleep(60)"
    )
    outcomes, done, on_outcome = collect()
    runner = HookRunner([sys.executable, "-c", code], 0.5, on_outcome)
    started = time.monotonic()
    runner.fire(ALARM)
    assert time.monotonic() - started < 0.2  # fire returns at once
    assert done.wait(10)
    assert time.monotonic() - started < 5
    assert not outcomes[0].ok and "did not finish within 0.5s" in outcomes[0].message


def test_too_many_at_once_are_skipped_not_queued() -> None:
    outcomes: list[HookOutcome] = []
    runner = HookRunner(
        [sys.executable, "-c", "import time; time.sleep(30)"], 1.0, outcomes.append
    )
    for k in range(6):
        runner.fire({**ALARM, "id": k})
    skipped = [o for o in outcomes if "too many" in o.message]
    assert [o.alarm_id for o in skipped] == [4, 5]
    runner.wait(10)


def test_hook_gets_the_alarm_record_from_the_book(tmp_path: Path) -> None:
    from linewatch.alarms import AlarmBook
    from linewatch.store.db import Store

    out = tmp_path / "got.json"
    code = "import sys, pathlib; pathlib.Path(sys.argv[1]).write_text(sys.stdin.read())"
    with Store(tmp_path / "s") as store:
        book = AlarmBook(store)
        [event] = book.observe_chart("od", "xbar", 0, 0, {"we1": [0]}, now=1.0)
        runner = HookRunner([sys.executable, "-c", code, str(out)], 10)
        runner.fire(book.hook_payload(event.alarm, now=2.0))
        runner.wait(10)
    got = json.loads(out.read_text())
    assert (got["id"], got["kind"], got["rule"], got["state"]) == (
        1, "beyond-limits", "we1", "unacknowledged"
    )
    assert got["description"].startswith("a point outside the control limits")


def test_a_failing_hook_is_reported_and_a_succeeding_one_as_ok() -> None:
    outcomes: list[HookOutcome] = []

    code = "import sys; sys.stdin.read(); sys.exit(2)"
    thread = HookRunner([sys.executable, "-c", code], 10, outcomes.append).fire(ALARM)
    assert thread is not None
    thread.join(10)
    assert [(o.ok, o.message) for o in outcomes] == [
        (False, f"hook {sys.executable} exited with 2")]
    ok = HookRunner([sys.executable, "-c", "import sys; sys.stdin.read()"], 10,
                    outcomes.append).fire(ALARM)
    assert ok is not None
    ok.join(10)
    assert len(outcomes) == 2 and outcomes[1].ok


def test_no_hook_configured_does_nothing() -> None:
    runner = HookRunner([])
    assert runner.fire(ALARM) is None
