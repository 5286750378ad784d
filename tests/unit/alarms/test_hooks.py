"""The alarm hook: real child processes get the alarm as JSON on stdin; failures and hangs are
reported and never block the caller."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from pathlib import Path

import pytest

from linewatch.alarms.hooks import MAX_RUNNING, HookOutcome, HookRunner
from tests.integration.watch.small_disk import mount_small_disk

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


def test_hook_gets_the_alarm_record_from_the_book(tmp_path: Path) -> None:
    from linewatch.alarms.book import AlarmBook
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


def _burst(n: int) -> list[dict]:
    """`n` alarms with priorities 1-4 mixed (ids 0..n-1 in the order they are raised)."""
    return [{**ALARM, "id": k, "priority": (k * 7) % 4 + 1} for k in range(n)]


def _logging_hook(log: Path, seconds: float) -> list[str]:
    """A slow hook that appends the id it got to `log` as it starts."""
    code = (
        "import json, sys, time; a = json.load(sys.stdin); "
        f"open({str(log)!r}, 'a').write(f\"{{a['id']}}\\n\"); time.sleep({seconds})"
    )
    return [sys.executable, "-c", code]


def test_a_burst_runs_every_urgent_call_in_priority_order(tmp_path: Path) -> None:
    # One hook at a time and room for 10 waiting calls: the first call starts at once, the
    # other 29 must wait, most urgent first, and only priority 3-4 calls may give way.
    log = tmp_path / "started.txt"
    outcomes: list[HookOutcome] = []
    runner = HookRunner(_logging_hook(log, 0.05), 10, outcomes.append,
                        max_running=1, max_queued=10)
    burst = _burst(30)
    for alarm in burst:
        runner.fire(alarm)
    runner.wait(120)
    started = [int(line) for line in log.read_text().split()]
    priority = {a["id"]: a["priority"] for a in burst}
    urgent = [a["id"] for a in burst if a["priority"] <= 2]
    assert set(urgent) <= set(started)  # no priority-1/2 call is lost
    assert len(started) == len(set(started))  # none runs twice
    after_first = started[1:]
    assert after_first == sorted(after_first, key=lambda i: (priority[i], i))
    drops = [o for o in outcomes if o.dropped]
    assert sum(o.dropped for o in drops) == runner.dropped == 30 - len(started) > 0
    assert all("dropped" in o.message and o.alarm_id is None and not o.ok for o in drops)
    ran = [o for o in outcomes if not o.dropped]
    assert len(ran) == len(started) and all(o.ok for o in ran)


def test_a_burst_with_four_running_loses_no_urgent_call(tmp_path: Path) -> None:
    # The default number running at once; a slow hook, so the whole burst queues up.
    log = tmp_path / "started.txt"
    outcomes: list[HookOutcome] = []
    runner = HookRunner(_logging_hook(log, 0.3), 10, outcomes.append, max_queued=6)
    burst = _burst(30)
    for alarm in burst:
        runner.fire(alarm)
    assert runner.queued >= 6  # fire never blocks: the burst waits in the queue
    runner.wait(120)
    started = [int(line) for line in log.read_text().split()]
    assert {a["id"] for a in burst if a["priority"] <= 2} <= set(started)
    assert len(started) + runner.dropped == 30 and runner.dropped > 0
    dropped_priorities = {a["priority"] for a in burst if a["id"] not in started}
    assert dropped_priorities <= {3, 4}


def test_calls_within_the_bound_are_queued_not_dropped(tmp_path: Path) -> None:
    log = tmp_path / "started.txt"
    outcomes: list[HookOutcome] = []
    runner = HookRunner(_logging_hook(log, 0.2), 10, outcomes.append)
    for k in range(12):  # three times as many as may run at once, all lowest priority
        runner.fire({**ALARM, "id": k, "priority": 4})
    runner.wait(60)
    assert sorted(int(line) for line in log.read_text().split()) == list(range(12))
    assert runner.dropped == 0 and all(o.ok for o in outcomes)


# The runner in its own process, so its peak memory is its own.
_CHATTY_RUNNER = """
import json, resource, sys
from linewatch.alarms.hooks import HookRunner
hook = [sys.executable, "-c",
        "import sys; b = b'x' * 1048576\\n"
        "for _ in range(100): sys.stderr.buffer.write(b)\\n"
        "sys.stderr.buffer.write(b'\\\\nstack light offline\\\\n'); sys.exit(4)"]
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
outcomes = []
runner = HookRunner(hook, 60, outcomes.append)
runner.fire({"id": 1, "priority": 1})
runner.wait(90)
grew = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss - before
print(json.dumps({"message": outcomes[0].message, "grew_kib": grew}))
"""


def test_a_hook_writing_100_mb_to_stderr_leaves_memory_and_disk_bounded(tmp_path: Path) -> None:
    with mount_small_disk(tmp_path / "tmp", size="8m") as disk:
        free_before = disk.free_bytes()
        done = subprocess.run(
            [sys.executable, "-c", _CHATTY_RUNNER], capture_output=True, text=True,
            timeout=120, env={**os.environ, "TMPDIR": str(disk.path)},
        )
        assert done.returncode == 0, done.stderr
        got = json.loads(done.stdout)
        assert disk.free_bytes() >= free_before - 65536  # no temporary file holds it
    # its last words survive 100 MB of chatter; memory grows by far less than 100 MB
    assert got["message"].endswith("exited with 4: stack light offline")
    assert got["grew_kib"] < 20 * 1024


def test_the_most_urgent_calls_of_a_burst_start_first(tmp_path: Path) -> None:
    # The burst is fired in a loop, least urgent first; the first calls to start are the
    # most urgent ones, not the first fired. (A long settle keeps a busy machine out of it.)
    log = tmp_path / "started.txt"
    runner = HookRunner(_logging_hook(log, 0.2), 10, settle=1.0)
    burst = sorted(_burst(12), key=lambda a: -a["priority"])
    for alarm in burst:
        runner.fire(alarm)
    runner.wait(60)
    started = [int(line) for line in log.read_text().split()]
    priority = {a["id"]: a["priority"] for a in burst}
    first_wave = sorted(priority[i] for i in started[:MAX_RUNNING])  # start together
    assert first_wave == sorted(priority.values())[:MAX_RUNNING] == [1, 1, 1, 2]
    assert sorted(started) == sorted(priority)
