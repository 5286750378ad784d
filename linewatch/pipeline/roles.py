"""The role loop of one instance: collector while it holds the lease, viewer otherwise.

A viewer tries for the lease every `RENEW_EVERY` seconds and otherwise watches the store for
commits by others; when the collector goes away (exits and releases, or dies and stops
renewing) a viewer takes over within the lease's expiry plus one try. The collector renews the
lease and runs a beat every `TICK_SECONDS`, and polls the files when the waker says something
may have changed (or while more is waiting).

Never silent: any failure of a unit (a store error, a bug) is an internal-error condition. It is
emitted at once (`{"type": "error"}`) and shown by the faces (`problem`); the instance steps
down, so what the unit read is rolled back and read again (nothing lost, nothing doubled) after
a back-off; after three failures in a row a priority-1 alarm "monitoring stopped" is raised and
reaches the hook.
"""

from __future__ import annotations

import contextlib
import sqlite3
import threading
import time
from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from linewatch.domain.errors import LeaseLost
from linewatch.store.lease import RENEW_EVERY, Lease

if TYPE_CHECKING:  # imported lazily at run time: a viewer never needs them
    from linewatch.alarms.book import AlarmBook
    from linewatch.feeds.tailer import Tailer
    from linewatch.feeds.watcher import Waker
    from linewatch.pipeline.announce import Announcer
    from linewatch.pipeline.collector import Collector, Outcome
    from linewatch.pipeline.plan import Characteristics, WatchPlan
    from linewatch.store.anchors import Anchorer
    from linewatch.store.db import Store

TICK_SECONDS = RENEW_EVERY  # lease renewal, stale checks, shelf expiry, changes by others
FAILURES_BEFORE_ALARM = 3  # failed passes in a row before "monitoring stopped" is raised
MAX_BACKOFF = 30.0  # seconds between retries after repeated failures, at most


def backoff(failures: int) -> float:
    """Seconds to wait after the `failures`-th failure in a row: 1, 2, 4 ... at most 30."""
    return min(MAX_BACKOFF, 2.0 ** (failures - 1))


class RoleLoop:
    """Collector or viewer of one store; `run` until stopped. The counters and `problem` are
    read by the faces from other threads."""

    def __init__(self, store: Store, alarms: AlarmBook, plan: WatchPlan,
                 characteristics: Characteristics, announcer: Announcer, lease: Lease, *,
                 anchorer: Anchorer | None, poll_seconds: float,
                 clock: Callable[[], float], changed: Callable[[], None]) -> None:
        self.store = store
        self.alarms = alarms
        self.plan = plan
        self.characteristics = characteristics
        self.announcer = announcer
        self.lease = lease
        self.anchorer = anchorer
        self.poll_seconds = poll_seconds
        self.clock = clock
        self.changed = changed
        self.role = "viewer"
        self.collector: Collector | None = None
        self.tailer: Tailer | None = None
        self.waker: Waker | None = None
        self.counts: dict[str, int] = {}  # good values per characteristic (this run)
        self.rejected = 0
        self.rows_read = 0
        self.catching_up: float | None = None  # fraction of the history read, while behind
        self._catch_up_since: float | None = None
        self._catch_up_rows = 0
        self._last_progress = 0.0
        self._last_tick = 0.0
        self._seen_data_version: int | None = None
        self._announced = False
        self.failures = 0  # failed passes in a row
        self.problem = ""  # the last failure, while the collector keeps failing
        self._stop: threading.Event | None = None

    @property
    def emit(self) -> Callable[[dict[str, Any]], None]:
        return self.announcer.emit

    # -- the loop ---------------------------------------------------------------------------

    def run(self, stop: threading.Event) -> None:
        """Collect (or watch as a viewer) until `stop` is set; then finish what was read."""
        self._stop = stop  # also asked while a pattern is expanded (SIGTERM during a walk)
        due = True  # read at once; later only when the waker says something may have changed
        try:
            while not stop.is_set():
                now = self.clock()
                try:
                    if self.role == "viewer":
                        if self.lease.try_acquire(now):
                            self._become_collector()
                            self.changed()
                            due = True
                            continue
                        if not self._announced:
                            self._announced = True
                            self.emit({"type": "role", "role": "viewer",
                                       "instance": self.lease.instance_id})
                        self._viewer_step()
                        self._recovered()
                        stop.wait(RENEW_EVERY)  # a viewer tries for the lease at this pace
                        continue
                    if now - self._last_tick >= TICK_SECONDS:
                        self._tick(now)
                    worked = self.step() if due or self.waker is None else False
                    self._recovered()
                except Exception as exc:  # keep monitoring; resume from what the store holds
                    self._step_down()
                    self._failed(exc)
                    if store_replaced(exc):  # no retry can help: say so and end
                        raise
                    stop.wait(backoff(self.failures))
                    due = True
                    continue
                # an idle line costs a wait, not a stat of every file twice a second: the
                # waker returns True on a file-system event and on its slow safety beat
                due = worked or self.waker is None or self.waker.wait(TICK_SECONDS)
            if self.role == "collector":
                with contextlib.suppress(Exception):  # its failure was reported already
                    self.step()
        finally:
            self.close()

    def step(self) -> bool:
        """Read and commit whatever is new; True when anything was read."""
        if self.tailer is None or self.collector is None or self.role != "collector":
            return False  # (a viewer has no tailer; reading rows it would not keep loses them)
        chunks = self.tailer.poll()
        if not chunks:
            return False
        try:
            outcome = self.collector.process(chunks, self.clock())
        except LeaseLost:  # replaced while stalled: the unit was rolled back, nothing written
            self._step_down()
            return True
        self._publish(outcome)
        self.rows_read += outcome.rows
        self._report_progress(any(c.more for c in chunks))
        self.announcer.alarm_changes(self.clock())
        self.changed()
        return True

    def _publish(self, outcome: Outcome) -> None:
        """After a commit: count what was read, emit the records, fire the hooks."""
        for name, n in outcome.values.items():
            self.counts[name] = self.counts.get(name, 0) + n
        self.rejected += outcome.rejected
        self.announcer.records(outcome.records)
        if outcome.raised:
            self.announcer.alarm_events(outcome.raised)

    def _tick(self, now: float) -> None:
        self._last_tick = now
        if not self.lease.renew(now):
            self._step_down()
            return
        assert self.collector is not None
        try:
            outcome = self.collector.beat(now)
        except LeaseLost:
            self._step_down()
            return
        self._publish(outcome)
        self._anchor()
        version = self.store.data_version()
        if outcome.records or outcome.raised or version != self._seen_data_version:
            self._seen_data_version = version
            self.announcer.alarm_changes(self.clock())
            self.changed()

    def _viewer_step(self) -> None:
        version = self.store.data_version()
        if version != self._seen_data_version:
            self._seen_data_version = version
            self.announcer.alarm_changes(self.clock())
            self.changed()

    # -- roles ------------------------------------------------------------------------------

    def _become_collector(self) -> None:
        from linewatch.feeds.tailer import Tailer
        from linewatch.feeds.watcher import Waker
        from linewatch.pipeline.collector import Collector

        self.role = "collector"
        self.collector = Collector(self.store, self.alarms, self.plan, self.characteristics,
                                   guard=self.lease.ensure)
        saved = self.store.ingest.files()
        # One column list serves every feed; with several feeds each file holds only some of
        # the characteristics, so every numeric column is read and the unknown ones dropped.
        # Columns asked for by name are still looked for in every file, and a file lacking
        # one says so (a `warning` feed event listing the columns it has); where rows name
        # their characteristic, a name no file holds is said once all were read.
        columns = self.plan.columns if len(self.plan.feeds) == 1 else None
        stop = self._stop
        stored = set(self.store.history.characteristics_with_points() if self.plan.asked
                     else ())
        self.tailer = Tailer(self.plan.feeds, columns, saved,
                             should_stop=None if stop is None else stop.is_set,
                             expected=self.plan.asked, text_columns=self.plan.text_columns,
                             found_before=[c.column for c in self.plan.characteristics
                                           if c.name in stored])
        self.waker = Waker(self.tailer.patterns, poll_seconds=self.poll_seconds or 0.0)
        self.emit({"type": "role", "role": "collector", "instance": self.lease.instance_id})

    def _step_down(self) -> None:
        """Drop everything held in memory and become a viewer; whoever collects next (maybe
        this instance again) resumes from what the store committed."""
        self.collector = None
        if self.tailer is not None:
            self.tailer.close()
            self.tailer = None
        if self.waker is not None:
            self.waker.close()
            self.waker = None
        with contextlib.suppress(Exception):
            self.lease.release()
        self.role = "viewer"
        self._announced = False

    # -- never silent -----------------------------------------------------------------------

    def _failed(self, exc: Exception) -> None:
        """One more failed pass: say so at once; after a few in a row, raise the alarm."""
        self.failures += 1
        self.problem = f"{type(exc).__name__}: {exc}"
        self.emit({"type": "error", "problem": self.problem, "failures": self.failures})
        self.changed()
        if self.failures != FAILURES_BEFORE_ALARM:
            return
        try:
            events = self.alarms.monitoring_failed(self.problem, self.clock())
        except Exception:  # the store itself fails: the hook still hears of it
            events = []
            self.announcer.hook_only(stopped_payload(self.problem, self.clock()))
        self.announcer.alarm_events(events)

    def _recovered(self) -> None:
        """A pass succeeded: the internal-error condition is over."""
        if not self.failures:
            return
        self.failures = 0
        self.problem = ""
        self.emit({"type": "error", "problem": "", "resolved": True})
        if self.role == "collector":
            self.announcer.alarm_events(self.alarms.monitoring_resumed(self.clock()))
        self.changed()

    # -- progress and audit anchors ---------------------------------------------------------

    def _report_progress(self, behind: bool) -> None:
        """While reading a large history (more than a second of it), say how far it got."""
        now = time.monotonic()
        if not behind:
            if self.catching_up is not None:
                self.catching_up = None
                self.emit({"type": "progress", "done": 1.0, "rows_per_second": 0.0})
            self._catch_up_since = None
            return
        if self._catch_up_since is None:
            self._catch_up_since, self._catch_up_rows = now, self.rows_read
            return
        elapsed = now - self._catch_up_since
        if elapsed < 1.0 or now - self._last_progress < 0.5:
            return
        assert self.tailer is not None
        done, total = self.tailer.backlog()
        self.catching_up = done / total if total else 1.0
        self._last_progress = now
        rate = (self.rows_read - self._catch_up_rows) / elapsed
        self.emit({"type": "progress", "done": self.catching_up, "rows_per_second": rate})

    def _anchor(self, why: str | None = None) -> None:
        """Write an audit anchor now (`why`) or when enough entries were added; a file that
        cannot be written is reported, never fatal."""
        if self.anchorer is None:
            return
        problem = self.anchorer.write(why) if why else self.anchorer.maybe()
        if problem:
            self.emit({"type": "error", "problem": problem})

    def close(self) -> None:
        """Let running alarm hooks finish or reach their time limit (so their outcome is
        reported), then release the lease and close the files (the store is the owner's)."""
        self.announcer.wait()
        if self.waker is not None:
            self.waker.close()
            self.waker = None
        if self.tailer is not None:
            self.tailer.close()
        if self.role == "collector":
            with contextlib.suppress(Exception):  # best effort on the way out
                self._anchor("stop")
            with contextlib.suppress(Exception):  # best effort on the way out
                self.lease.release()


def store_replaced(exc: BaseException) -> bool:
    """SQLite says the store file is damaged or was replaced under us ("file is not a
    database", "malformed"): unlike a full disk or a lock, no retry can mend that."""
    return isinstance(exc, sqlite3.DatabaseError) and not isinstance(exc, sqlite3.OperationalError)


def stopped_payload(problem: str, now: float) -> dict[str, Any]:
    """What the hook receives about a "monitoring stopped" alarm that could not be stored."""
    from linewatch.alarms.lifecycle import FEED_CHART, MONITOR_SUBJECT, STOPPED_RULE
    from linewatch.domain.alarm_states import MOST_URGENT, AlarmKind, AlarmState
    from linewatch.domain.clock import iso_time

    return {"id": None, "kind": AlarmKind.FEED_HEALTH, "characteristic": MONITOR_SUBJECT,
            "chart": FEED_CHART, "rule": STOPPED_RULE, "priority": MOST_URGENT,
            "state": AlarmState.UNACKNOWLEDGED,
            "raised_at": iso_time(now), "action": "raised",
            "description": f"monitoring stopped: {problem}", "detail": problem,
            "reaction_plan": "", "stored": False}
