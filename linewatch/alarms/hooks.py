"""The optional alarm hook: a command (an argument list, never a shell string) started with the
alarm as JSON on its standard input — to switch a stack light or send a message.

Calls wait in a bounded queue in the domain's urgency order (`urgency_rank`: priority 1 first),
oldest first within a rank, and at most `max_running` hooks run at once on background threads. A
burst never loses a priority-1 or -2 call: when the queue is full, the least urgent queued call
of priority 3 or lower gives way, and the drops are reported as one counted outcome. A hook that
fails, cannot start or hangs is killed (with its whole process group) and reported through the
callback, and never delays monitoring. Only a bounded tail of what a hook writes to its stderr
is kept, in memory, so a chatty hook cannot fill the disk or the memory. Call `fire` only after
the transaction that raised the alarm has committed.
"""

from __future__ import annotations

import contextlib
import heapq
import json
import os
import select
import signal
import subprocess
import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

from linewatch.domain.alarm_states import MOST_URGENT, urgency_rank

MAX_RUNNING = 4  # hooks running at once; further calls wait in the queue
MAX_QUEUED = 64  # calls waiting; beyond this, priority 3 and lower give way
PROTECTED_PRIORITY = 2  # calls of this priority or more urgent are never dropped
BURST_SETTLE = 0.02  # a new worker waits this long, so a burst is ordered as a whole
TAIL_BYTES = 4096  # how much of a hook's stderr is kept for its outcome message
_READ_CHUNK = 65536
_DRAIN_SECONDS = 0.2  # after the hook exits, how long to read what a grandchild still writes


@dataclass(frozen=True, slots=True)
class HookOutcome:
    """How one run of the hook ended; `ok` False carries a one-line message. `dropped` > 0
    marks the counted report of calls dropped from a full queue (`alarm_id` is then None)."""

    alarm_id: int | None
    ok: bool
    message: str
    seconds: float
    dropped: int = 0


@dataclass(order=True, slots=True)
class _Call:
    """One queued hook call, ordered most urgent first, then oldest first."""

    rank: tuple[int, int]  # urgency_rank of the alarm
    seq: int
    priority: int = field(compare=False)
    alarm_id: int | None = field(compare=False)
    payload: bytes = field(compare=False)


def _priority_of(alarm: dict[str, Any]) -> int:
    """The alarm's priority; a missing or odd one counts as most urgent (never dropped)."""
    value = alarm.get("priority")
    if isinstance(value, bool) or not isinstance(value, int):
        return MOST_URGENT
    return value


def _call(alarm: dict[str, Any], seq: int, payload: bytes) -> _Call:
    priority = _priority_of(alarm)
    state = alarm.get("state")
    rank = urgency_rank(state if isinstance(state, str) else "", priority)
    return _Call(rank, seq, priority, alarm.get("id"), payload)


class HookRunner:
    """Runs the configured hook for each raised alarm without ever blocking the caller."""

    def __init__(
        self,
        argv: Sequence[str],
        timeout: float = 5.0,
        on_outcome: Callable[[HookOutcome], None] | None = None,
        *,
        max_running: int = MAX_RUNNING,
        max_queued: int = MAX_QUEUED,
        settle: float = BURST_SETTLE,
    ) -> None:
        if isinstance(argv, str):
            raise TypeError("the hook is an argument list, not a shell string")
        self.argv = list(argv)
        self.timeout = timeout
        self.on_outcome = on_outcome
        self.max_running = max(1, max_running)
        self.max_queued = max(0, max_queued)
        self.settle = settle
        self.dropped = 0  # calls dropped from a full queue since the start
        self._queue: list[_Call] = []  # a heap
        self._seq = 0
        self._running = 0
        self._unreported_drops: list[int | None] = []
        self._threads: list[threading.Thread] = []
        self._cond = threading.Condition()

    def fire(self, alarm: dict[str, Any]) -> threading.Thread | None:
        """Queue the hook for `alarm` (a JSON-able dict, with its "priority") and return at
        once. Returns the worker thread started for it, or None when it waits behind running
        hooks, was dropped, or no hook is configured."""
        if not self.argv:
            return None
        payload = json.dumps(alarm, default=str).encode("utf-8")
        with self._cond:
            self._seq += 1
            call = _call(alarm, self._seq, payload)
            if len(self._queue) >= self.max_queued and self._running >= self.max_running:
                dropped = self._make_room(call)
                if dropped is not None:
                    self.dropped += 1
                    self._unreported_drops.append(dropped.alarm_id)
            else:
                heapq.heappush(self._queue, call)
            thread = None
            if self._running < self.max_running and self._queue:
                self._running += 1
                thread = threading.Thread(target=self._work, name="linewatch-hook", daemon=True)
                self._threads = [t for t in self._threads if t.is_alive()]
                self._threads.append(thread)
        if thread is not None:
            thread.start()
        return thread

    def _make_room(self, call: _Call) -> _Call | None:
        """With the queue full: queue `call` if it is more urgent than the least urgent
        droppable call (which is dropped), or drop `call` itself; a protected call is always
        queued. Returns the call that was dropped, if any. Holds the lock."""
        droppable = [c for c in self._queue if c.priority > PROTECTED_PRIORITY]
        worst = max(droppable, default=None)  # least urgent, newest within it
        if worst is not None and worst > call:
            self._queue.remove(worst)
            heapq.heapify(self._queue)
            heapq.heappush(self._queue, call)
            return worst
        if call.priority <= PROTECTED_PRIORITY:
            heapq.heappush(self._queue, call)  # over the bound rather than lose it
            return None
        return call

    def wait(self, timeout: float | None = None) -> None:
        """Wait until the queue is empty and no hook runs (at shutdown, and in tests)."""
        deadline = None if timeout is None else time.monotonic() + timeout
        with self._cond:
            while self._queue or self._running:
                left = None if deadline is None else deadline - time.monotonic()
                if left is not None and left <= 0:
                    break
                self._cond.wait(left)
        self._report_drops()

    @property
    def queued(self) -> int:
        """How many calls wait for a free slot."""
        with self._cond:
            return len(self._queue)

    def _report(self, outcome: HookOutcome) -> None:
        report = self.on_outcome
        if report is not None:
            # a faulty callback must not kill the hook thread
            with contextlib.suppress(Exception):
                report(outcome)

    def _report_drops(self) -> None:
        """Report the drops since the last report as one counted outcome."""
        with self._cond:
            ids, self._unreported_drops = self._unreported_drops, []
            total = self.dropped
        if not ids:
            return
        shown = ", ".join(str(i) for i in ids[:10]) + (", ..." if len(ids) > 10 else "")
        message = (
            f"hook queue full: {len(ids)} call(s) of priority {PROTECTED_PRIORITY + 1} or lower "
            f"dropped (alarms {shown}; {total} since start)"
        )
        self._report(HookOutcome(None, False, message, 0.0, dropped=len(ids)))

    def _work(self) -> None:
        """Run queued calls, most urgent first, until the queue is empty. The first pick
        waits `settle` seconds: the alarms of one row are fired one after another, and the
        most urgent of them should start first, not whichever came first."""
        time.sleep(self.settle)
        while True:
            self._report_drops()
            with self._cond:
                if not self._queue:
                    self._running -= 1
                    self._cond.notify_all()
                    return
                call = heapq.heappop(self._queue)
            try:
                outcome = self._execute(call.alarm_id, call.payload, time.monotonic())
            except Exception as exc:  # never let one call stop the worker
                outcome = HookOutcome(call.alarm_id, False, f"hook failed: {exc}", 0.0)
            self._report(outcome)

    def _execute(self, alarm_id: int | None, payload: bytes, start: float) -> HookOutcome:
        name = self.argv[0]
        try:
            proc = subprocess.Popen(
                self.argv,
                stdin=subprocess.PIPE,
                stdout=subprocess.DEVNULL,
                stderr=subprocess.PIPE,
                start_new_session=True,
            )
        except OSError as exc:
            message = f"hook {name} cannot start: {exc.strerror}"
            return HookOutcome(alarm_id, False, message, 0.0)
        assert proc.stdin is not None and proc.stderr is not None
        tail, finished = _feed_and_watch(proc, payload, start + self.timeout)
        if not finished:
            _kill_group(proc)
            return HookOutcome(
                alarm_id, False, f"hook {name} did not finish within {self.timeout:g}s; killed",
                time.monotonic() - start,
            )
        seconds = time.monotonic() - start
        if proc.returncode != 0:
            lines = tail.decode("utf-8", "replace").strip().splitlines()
            said = f": {lines[-1][-300:]}" if lines else ""
            return HookOutcome(
                alarm_id, False, f"hook {name} exited with {proc.returncode}{said}", seconds
            )
        return HookOutcome(alarm_id, True, f"hook {name} ran", seconds)


def _feed_and_watch(
    proc: subprocess.Popen[bytes], payload: bytes, deadline: float
) -> tuple[bytes, bool]:
    """Write `payload` to the hook's stdin and read its stderr until it exits or `deadline`
    passes, keeping only the last TAIL_BYTES. Returns (tail, exited in time). A grandchild
    that keeps stderr open cannot hang us: reading stops shortly after the hook exits."""
    assert proc.stdin is not None and proc.stderr is not None
    err_fd = proc.stderr.fileno()
    stdin_fd = proc.stdin.fileno()
    os.set_blocking(err_fd, False)
    os.set_blocking(stdin_fd, False)
    in_fd: int | None = stdin_fd  # None once the payload is written
    tail = bytearray()
    pending = memoryview(payload)
    exited_at: float | None = None
    err_open = True
    try:
        while True:
            now = time.monotonic()
            if exited_at is None and proc.poll() is not None:
                exited_at = now
            if exited_at is not None and (not err_open or now - exited_at > _DRAIN_SECONDS):
                return bytes(tail), True
            if exited_at is None and now >= deadline:
                return bytes(tail), False
            readers = [err_fd] if err_open else []
            writers = [in_fd] if in_fd is not None else []
            wait = min(0.05, max(0.0, deadline - now))
            readable, writable, _ = select.select(readers, writers, [], wait)
            if writable and in_fd is not None:
                try:
                    sent = os.write(in_fd, pending[:_READ_CHUNK])
                    pending = pending[sent:]
                except (BrokenPipeError, OSError):  # the hook exited without reading
                    pending = pending[:0]
                if not pending:
                    proc.stdin.close()
                    in_fd = None
            if readable:
                try:
                    chunk = os.read(err_fd, _READ_CHUNK)
                except BlockingIOError:
                    chunk = b""
                    continue
                if not chunk:
                    err_open = False
                    continue
                tail += chunk
                if len(tail) > TAIL_BYTES:
                    del tail[: len(tail) - TAIL_BYTES]
    finally:
        with contextlib.suppress(OSError):
            proc.stdin.close()
        with contextlib.suppress(OSError):
            proc.stderr.close()


def _kill_group(proc: subprocess.Popen[bytes]) -> None:
    """Kill the hook and anything it started, then reap it."""
    try:
        os.killpg(proc.pid, signal.SIGKILL)
    except (ProcessLookupError, PermissionError):
        proc.kill()
    proc.wait()
