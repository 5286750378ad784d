"""The optional alarm hook: a command (an argument list, never a shell string) started with the
alarm as JSON on its standard input — to switch a stack light or send a message.

Each run happens on its own background thread under a time limit; a hook that fails, cannot start
or hangs is killed (with its whole process group) and reported through a callback, and never
delays monitoring. Call `fire` only after the transaction that raised the alarm has committed.
"""

from __future__ import annotations

import contextlib
import json
import os
import signal
import subprocess
import tempfile
import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

MAX_RUNNING = 4  # more hooks at once than this are skipped and reported, not queued


@dataclass(frozen=True, slots=True)
class HookOutcome:
    """How one run of the hook ended; `ok` False carries a one-line message."""

    alarm_id: int | None
    ok: bool
    message: str
    seconds: float


class HookRunner:
    """Runs the configured hook for each raised alarm without ever blocking the caller."""

    def __init__(
        self,
        argv: Sequence[str],
        timeout: float = 5.0,
        on_outcome: Callable[[HookOutcome], None] | None = None,
    ) -> None:
        if isinstance(argv, str):
            raise TypeError("the hook is an argument list, not a shell string")
        self.argv = list(argv)
        self.timeout = timeout
        self.on_outcome = on_outcome
        self._slots = threading.BoundedSemaphore(MAX_RUNNING)
        self._threads: list[threading.Thread] = []
        self._lock = threading.Lock()

    def fire(self, alarm: dict[str, Any]) -> threading.Thread | None:
        """Start the hook for `alarm` (a JSON-able dict) in the background; returns at once."""
        if not self.argv:
            return None
        report = self.on_outcome
        alarm_id = alarm.get("id")
        if not self._slots.acquire(blocking=False):
            message = "hook skipped: too many still running"
            self._report(HookOutcome(alarm_id, False, message, 0.0), report)
            return None
        payload = json.dumps(alarm, default=str).encode("utf-8")
        thread = threading.Thread(
            target=self._run, args=(alarm_id, payload, report), name="linewatch-hook", daemon=True
        )
        with self._lock:
            self._threads = [t for t in self._threads if t.is_alive()]
            self._threads.append(thread)
        thread.start()
        return thread

    def wait(self, timeout: float | None = None) -> None:
        """Wait for running hooks (at shutdown, and in tests)."""
        deadline = None if timeout is None else time.monotonic() + timeout
        with self._lock:
            threads = list(self._threads)
        for t in threads:
            t.join(None if deadline is None else max(0.0, deadline - time.monotonic()))

    @staticmethod
    def _report(outcome: HookOutcome, report: Callable[[HookOutcome], None] | None) -> None:
        if report is not None:
            # a faulty callback must not kill the hook thread
            with contextlib.suppress(Exception):
                report(outcome)

    def _run(
        self, alarm_id: int | None, payload: bytes, report: Callable[[HookOutcome], None] | None
    ) -> None:
        start = time.monotonic()
        try:
            outcome = self._execute(alarm_id, payload, start)
        finally:
            self._slots.release()
        self._report(outcome, report)

    def _execute(self, alarm_id: int | None, payload: bytes, start: float) -> HookOutcome:
        name = self.argv[0]
        # stderr goes to a file, not a pipe: a grandchild keeping a pipe open cannot hang us.
        with tempfile.TemporaryFile() as err:
            try:
                proc = subprocess.Popen(
                    self.argv,
                    stdin=subprocess.PIPE,
                    stdout=subprocess.DEVNULL,
                    stderr=err,
                    start_new_session=True,
                )
            except OSError as exc:
                message = f"hook {name} cannot start: {exc.strerror}"
                return HookOutcome(alarm_id, False, message, 0.0)
            try:
                proc.communicate(payload, timeout=self.timeout)
            except subprocess.TimeoutExpired:
                _kill_group(proc)
                return HookOutcome(
                    alarm_id, False, f"hook {name} did not finish within {self.timeout:g}s; killed",
                    time.monotonic() - start,
                )
            except BrokenPipeError:  # the hook exited without reading its input
                proc.wait()
            seconds = time.monotonic() - start
            if proc.returncode != 0:
                err.seek(0)
                tail = err.read()[-300:].decode("utf-8", "replace").strip().splitlines()
                said = f": {tail[-1]}" if tail else ""
                return HookOutcome(
                    alarm_id, False, f"hook {name} exited with {proc.returncode}{said}", seconds
                )
            return HookOutcome(alarm_id, True, f"hook {name} ran", seconds)


def _kill_group(proc: subprocess.Popen[bytes]) -> None:
    """Kill the hook and anything it started, then reap it."""
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        proc.kill()
    proc.wait()
