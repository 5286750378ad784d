"""The pipeline both faces share: feeds -> engine -> alarms -> store, then records to the face.

One `Monitor` per process. It holds the collector lease when it can: the collector tails the
files, runs the engines and commits every processed chunk — file offsets, engine state, points,
limits, alarms and audit entries — in ONE transaction, so a crash loses nothing and doubles
nothing. Other instances on the same state directory are viewers: they read the same store, and
take over collecting within seconds when the collector goes away.

Faces get two things: `records` (dicts in the jsonl format of `check`, plus feed/alarm records)
through the `emit` callback, and `LineSnapshot`s through `snapshot()` (see `snapshot.py`).
"""

from __future__ import annotations

import contextlib
import json
import os
import threading
import time
import uuid
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, cast

from linewatch.alarms.book import SYSTEM_ACTOR, AlarmEvent
from linewatch.config.loading import CharacteristicConfig, Config, FeedConfig
from linewatch.config.selection import chart_setup
from linewatch.domain.errors import LinewatchError
from linewatch.domain.jsonl import limits_record, rejected_record, signal_record
from linewatch.domain.records import FeedEvent, Limits
from linewatch.engine.characteristic import CharacteristicEngine, Firing, LiveOutput
from linewatch.store.lease import RENEW_EVERY

if TYPE_CHECKING:  # imported lazily at run time: a viewer never needs them
    from linewatch.alarms.hooks import HookOutcome, HookRunner
    from linewatch.engine.limits import LimitSet
    from linewatch.feeds.formats import Batch
    from linewatch.feeds.health import FeedHealth
    from linewatch.feeds.tailer import TailChunk, Tailer
    from linewatch.feeds.watcher import Waker
    from linewatch.store.anchors import Anchorer
    from linewatch.store.db import Store

Emit = Callable[[dict[str, Any]], None]
TICK_SECONDS = RENEW_EVERY  # lease renewal, stale checks, shelf expiry, changes by others
BASELINE_REQUEST = "baseline-request:"  # meta key prefix: a viewer asks the collector
PHASE_REQUEST = "phase-request:{name}:{phase}"  # meta key: who asked for a phase, and why
ANNOUNCED = ("raised", "re-raised", "escalated")  # alarm events that reach the hook
FAILURES_BEFORE_ALARM = 3  # failed passes in a row before "monitoring stopped" is raised
MAX_BACKOFF = 30.0  # seconds between retries after repeated failures, at most
UNREAD_LINES = "unread-lines:{file}"  # meta key: lines of a file with no header to go by
TIME_COUNTS = "time-stamps:{file}"  # meta key: "<went backwards>,<not readable>" of a file
LIMITS_REFUSED = "limits-refused:{name}"  # meta key: why this phase's limits were refused


@dataclass(slots=True)
class WatchPlan:
    """What to watch: the feeds (with their patterns) and the characteristics."""

    config: Config
    feeds: list[FeedConfig]
    characteristics: list[CharacteristicConfig]  # empty: discover every numeric column
    columns: list[str] | None  # columns to keep (None: every numeric column)
    baseline: int
    title: str = ""
    asked: list[str] | None = None  # columns named on the command line (`--column`)
    overrides: Callable[[CharacteristicConfig], CharacteristicConfig] = field(
        default=lambda c: c
    )

    def discovered(self, name: str) -> CharacteristicConfig:
        """How a characteristic found in the data (not declared) is charted: the command
        line's options, and the config-wide acknowledgement reasons."""
        return self.overrides(CharacteristicConfig(
            name=name, column=name, reasons=list(self.config.alarms.reasons)))


class Monitor:
    """Collector or viewer of one state directory."""

    def __init__(self, plan: WatchPlan, state_dir: Path, *, emit: Emit | None = None,
                 poll_seconds: float | None = None, clock: Callable[[], float] = time.time):
        from linewatch.alarms.book import AlarmBook
        from linewatch.runtime.statedir import open_store
        from linewatch.store.lease import Lease

        self.plan = plan
        self.config = plan.config
        self.emit = emit or (lambda record: None)
        self.clock = clock
        self.poll_seconds = (
            poll_seconds if poll_seconds is not None else plan.config.monitor.poll_seconds
        )
        self.state_dir = Path(state_dir)
        self.store = open_store(self.state_dir, create=True,
                                shared_group=plan.config.monitor.shared_group)
        self.anchorer = self._configure_audit()
        self.alarms = AlarmBook(self.store, plan.config)
        self.instance = f"{os.getpid()}-{uuid.uuid4().hex[:8]}"
        self.lease = Lease(self.store, self.instance)
        self.role = "viewer"
        self.engines: dict[str, CharacteristicEngine] = {}
        self.char_configs: dict[str, CharacteristicConfig] = {
            c.name: c for c in plan.characteristics
        }
        self.by_column: dict[str, str] = {c.column: c.name for c in plan.characteristics}
        self.counts: dict[str, int] = {}  # good values per characteristic (this run)
        self.rejected = 0
        self.tailer: Tailer | None = None
        self.waker: Waker | None = None
        self.health: FeedHealth | None = None
        self._listeners: list[Callable[[int], None]] = []
        self._version = 0
        self._last_tick = 0.0
        self._hooks: HookRunner | None = None
        self.rows_read = 0
        self.catching_up: float | None = None  # fraction of the history read, while behind
        self._catch_up_since: float | None = None
        self._catch_up_rows = 0
        self._last_progress = 0.0
        # alarm id -> (state, acknowledged by, last index) at the last look
        self._alarm_states: dict[int, tuple[str, str | None, int | None]] = {}
        self._seen_data_version: int | None = None
        self._announced = False
        self.failures = 0  # failed passes in a row
        self.problem = ""  # the last failure, while the collector keeps failing
        self._stop: threading.Event | None = None
        self.alarms.load_config(plan.config)

    def _configure_audit(self) -> Anchorer | None:
        """The audit key and anchor file of the config (the store is closed on a bad one)."""
        from linewatch.store.anchors import configure_audit

        try:
            return configure_audit(self.store, self.config.monitor, self.config.source)
        except BaseException:
            self.store.close()
            raise

    def _anchor(self, why: str | None = None) -> None:
        """Write an audit anchor now (`why`) or when enough entries were added; a file that
        cannot be written is reported, never fatal."""
        if self.anchorer is None:
            return
        problem = self.anchorer.write(why) if why else self.anchorer.maybe()
        if problem:
            self.emit({"type": "error", "problem": problem})

    @property
    def title(self) -> str:
        if self.plan.title:
            return f"linewatch · {self.plan.title}"
        src = Path(self.config.source) if self.config.source else None
        if src is None:
            return "linewatch"
        name = src.stem if src.stem != "linewatch" else src.resolve().parent.name
        return f"linewatch · {name}"

    @property
    def version(self) -> int:
        """Grows with every change the faces should redraw for."""
        return self._version

    def poke(self) -> None:
        """Something changed outside the loop (an acknowledgement): tell the faces now."""
        self._changed()

    # -- listeners (faces) --
    def subscribe(self, callback: Callable[[int], None]) -> None:
        """`callback(version)` is called from the monitor thread after every change."""
        self._listeners.append(callback)

    def _changed(self) -> None:
        self._version += 1
        for cb in list(self._listeners):
            cb(self._version)

    # -- roles --
    def _become_collector(self) -> None:
        from linewatch.feeds.health import FeedHealth
        from linewatch.feeds.tailer import Tailer
        from linewatch.feeds.watcher import Waker

        self.role = "collector"
        saved = self.store.ingest.files()
        # One column list serves every feed; with several feeds each file holds only some of
        # the characteristics, so every numeric column is read and the unknown ones dropped here.
        # Columns asked for by name are still looked for in every file, and a file lacking
        # one says so (a `warning` feed event listing the columns it has).
        columns = self.plan.columns if len(self.plan.feeds) == 1 else None
        expected = self.plan.asked if columns is None else None
        stop = self._stop
        self.tailer = Tailer(self.plan.feeds, columns, saved,
                             should_stop=None if stop is None else stop.is_set,
                             expected=expected)
        self.waker = Waker(self.tailer.patterns, poll_seconds=self.poll_seconds or 0.0)
        mon = self.config.monitor
        self.health = FeedHealth(mon.stale_after, mon.stuck_repeats)
        states = self.store.ingest.engines()
        for name, text in states.items():
            c = self._char_config(name)
            if c is None:
                continue
            setup = chart_setup(c, self.plan.baseline)
            self.engines[name] = CharacteristicEngine.from_state(setup, json.loads(text))
        self.emit({"type": "role", "role": "collector", "instance": self.instance})

    def _char_config(self, name: str) -> CharacteristicConfig | None:
        c = self.char_configs.get(name)
        if c is None and not self.plan.characteristics:
            c = self.plan.discovered(name)
            self.char_configs[name] = c
            self.by_column[name] = name
            self.store.history.save_characteristics([c])
        return c

    def _engine(self, name: str) -> CharacteristicEngine | None:
        eng = self.engines.get(name)
        if eng is None:
            c = self._char_config(name)
            if c is None:
                return None
            eng = CharacteristicEngine(chart_setup(c, self.plan.baseline))
            self.engines[name] = eng
        return eng

    # -- the loop --
    def run(self, stop: threading.Event) -> None:
        """Collect (or watch as a viewer) until `stop` is set; then finish what was read.

        Never silent: any failure of a pass (a store error, a bug) is an internal-error
        condition. It is emitted at once (`{"type": "error"}`) and shown by the faces
        (`problem`); what the pass read is rolled back and read again (nothing lost, nothing
        doubled) after a back-off; after three failures in a row a priority-1 alarm
        "monitoring stopped" is raised and reaches the hook."""
        self._stop = stop  # also asked while a pattern is expanded (SIGTERM during a walk)
        due = True  # read at once; later only when the waker says something may have changed
        try:
            while not stop.is_set():
                now = self.clock()
                try:
                    if self.role == "viewer":
                        if self.lease.try_acquire(now):
                            self._become_collector()
                            self._changed()
                            due = True
                            continue
                        if not self._announced:
                            self._announced = True
                            self.emit({"type": "role", "role": "viewer",
                                       "instance": self.instance})
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
                    if _store_replaced(exc):  # no retry can help: say so and end
                        raise
                    stop.wait(min(MAX_BACKOFF, 2.0 ** (self.failures - 1)))
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

    def _failed(self, exc: Exception) -> None:
        """One more failed pass: say so at once; after a few in a row, raise the alarm."""
        self.failures += 1
        self.problem = f"{type(exc).__name__}: {exc}"
        self.emit({"type": "error", "problem": self.problem, "failures": self.failures})
        self._changed()
        if self.failures != FAILURES_BEFORE_ALARM:
            return
        try:
            events = self.alarms.monitoring_failed(self.problem, self.clock())
        except Exception:  # the store itself fails: the hook still hears of it
            events = []
            if self.config.alarms.hook:
                self._run_hooks([])  # (starts the runner)
                assert self._hooks is not None
                self._hooks.fire(_stopped_payload(self.problem, self.clock()))
        self._run_hooks(events)

    def _recovered(self) -> None:
        """A pass succeeded: the internal-error condition is over."""
        if not self.failures:
            return
        self.failures = 0
        self.problem = ""
        self.emit({"type": "error", "problem": "", "resolved": True})
        if self.role == "collector":
            self._run_hooks(self.alarms.monitoring_resumed(self.clock()))
        self._changed()

    def close(self) -> None:
        """Let running alarm hooks finish or reach their time limit (so their outcome is
        reported), then release the lease and close files and the store."""
        if self._hooks is not None:
            self._hooks.wait(self._hooks.timeout + 1.0)
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
        self.store.close()

    def _viewer_step(self) -> None:
        version = self.store.data_version()
        if version != self._seen_data_version:
            self._seen_data_version = version
            self._emit_alarm_changes()
            self._changed()

    def _tick(self, now: float) -> None:
        self._last_tick = now
        if not self.lease.renew(now):
            self._step_down()
            return
        events: list[FeedEvent] = []
        assert self.health is not None
        for ev in self.health.tick(now):
            events.append(ev)
        records: list[dict[str, Any]] = []
        raised: list[AlarmEvent] = []
        with self.store.transaction():
            for ev in events:
                records.append(self._record_feed_event(ev, now, raised))
            raised += self.alarms.tick(now)
            self._serve_baseline_requests(now, raised)
            raised += self.alarms.check_flood(now)
        for rec in records:
            self.emit(rec)
        self._run_hooks(raised)
        self._anchor()
        version = self.store.data_version()
        if events or raised or version != self._seen_data_version:
            self._seen_data_version = version
            self._emit_alarm_changes()
            self._changed()

    def step(self) -> bool:
        """Read and process whatever is new; True when anything was read."""
        if self.tailer is None or self.role != "collector":
            return False  # (a viewer has no tailer; reading rows it would not keep loses them)
        chunks = self.tailer.poll()
        if not chunks:
            return False
        self._process_chunks(chunks)
        self.rows_read += sum(c.batch.rows for c in chunks if c.batch is not None)
        self._report_progress(any(c.more for c in chunks))
        self._emit_alarm_changes()
        self._changed()
        return True

    # -- processing --
    def _process_chunks(self, chunks: list[TailChunk]) -> None:
        """Everything one poll read, in one transaction: file offsets, points, limits, alarms,
        audit and each touched characteristic's engine state (saved once, at the end), so a
        folder of many small files costs one commit, and a crash keeps all of it or none."""
        now = self.clock()
        records: list[dict[str, Any]] = []
        raised: list[AlarmEvent] = []
        touched: set[str] = set()
        from linewatch.domain.errors import LeaseLost

        try:
            with self.store.transaction():
                # a collector that stalled past its lease and was replaced must not write twice
                self.lease.ensure()
                for chunk in chunks:
                    self._process_chunk(chunk, now, records, raised, touched)
                for name in sorted(touched):
                    eng = self.engines[name]
                    self.store.ingest.save_engine(name, json.dumps(eng.to_state()), now)
        except LeaseLost:
            self._step_down()
            return
        # any other failure rolled the transaction back: the caller steps down and resumes
        # from the store
        for rec in records:
            if rec:
                self.emit(rec)
        if raised:
            self._run_hooks(raised)

    def _process_chunk(self, chunk: TailChunk, now: float, records: list[dict[str, Any]],
                       raised: list[AlarmEvent], touched: set[str]) -> None:
        """One file's part of a poll (inside the poll's transaction)."""
        assert self.health is not None
        for ev in chunk.events:
            if ev.kind != "waiting":  # a pattern with no file yet shows as waiting
                self.health.file_event(ev, now)
            records.append(self._record_feed_event(ev, now, raised))
        batch = chunk.batch
        if batch is not None:
            for n in batch.notices:  # e.g. a duplicate column name: said once per file
                detail = f"line {n.line}: {n.text}"
                if n.kind == "no-header":
                    detail = f"{batch.unread:,} lines from line {n.line} on not read: {n.text}"
                records.append(self._record_feed_event(
                    FeedEvent(n.kind, n.file, detail), now, raised))
            if batch.unread:  # lines of a file without a header: counted, said once above
                self.rejected += batch.unread
                key = UNREAD_LINES.format(file=batch.file)
                total = int(self.store.get_meta(key) or 0) + batch.unread
                self.store.set_meta(key, str(total))
            if batch.rows:
                self._headed(batch.file, now, records, raised)
            for r in batch.rejected:
                records.append(rejected_record(r))
                self.store.history.add_feed_event(
                    FeedEvent("rejected", r.file, f"line {r.line}: {r.reason}"), now)
            self.rejected += len(batch.rejected)
            # rows caught up from a file's history count as written when the file says (its
            # ages and staleness then tell the truth right after a start)
            written = now if chunk.written_at is None else min(now, chunk.written_at)
            for column, values in batch.values.items():
                name = self.by_column.get(column) or (
                    column if not self.plan.characteristics else None)
                if name is None or len(values) == 0:
                    continue
                if self._engine(name) is not None:
                    touched.add(name)
                records.extend(self._process_values(name, batch, column, now, written, raised))
            if batch.rows:
                self.health.rows_arrived(batch.file, batch.rows, written)
                self._count_times(batch)
        if chunk.state is not None:
            self.store.ingest.save_file(chunk.state, now)

    def _headed(self, file: str, now: float, records: list[dict[str, Any]],
                raised: list[AlarmEvent]) -> None:
        """Rows of a file counted as having no header are read now (a header was added, or
        the file was replaced by one with a header): say so, return its no-header alarm and
        clear the count, so the file no longer shows as unread."""
        key = UNREAD_LINES.format(file=file)
        before = int(self.store.get_meta(key) or 0)
        if not before:
            return
        self.store.set_meta(key, "0")
        records.append(self._record_feed_event(FeedEvent(
            "header", file, f"a header to go by now: its rows are read; {before:,} lines "
            "without one were counted before"), now, raised))

    def _count_times(self, batch: Batch) -> None:
        """Count the batch's time stamps that go backwards or cannot be read (the rows are
        kept); the counts are saved with the offsets, so a restart neither loses nor repeats
        them."""
        assert self.health is not None
        columns = [(batch.lines[c], batch.times[c]) for c in batch.times if batch.times[c]]
        if not columns:
            return
        lines0, times0 = columns[0]
        if all(len(ln) == len(lines0) and list(ln) == list(lines0) for ln, _ in columns[1:]):
            times = list(times0)  # wide rows: every column has the same rows
        else:  # long rows: each name has its own rows; put them back in file order
            by_line: dict[int, str | None] = {}
            for ln, tm in columns:
                by_line.update(zip(ln, tm, strict=True))
            times = [by_line[k] for k in sorted(by_line)]
        key = TIME_COUNTS.format(file=batch.file)
        before = self.health.time_counts(batch.file)
        if before == (0, 0) and (raw := self.store.get_meta(key)):
            start = tuple(int(x) for x in raw.split(","))
            before = (start[0], start[1])
        self.health.times_arrived(batch.file, times, before)
        after = self.health.time_counts(batch.file)
        if after != before:
            self.store.set_meta(key, f"{after[0]},{after[1]}")

    def _process_values(
        self, name: str, batch: Batch, column: str, now: float, written: float,
        raised: list[AlarmEvent],
    ) -> list[dict[str, Any]]:
        eng = self._engine(name)
        if eng is None:
            return []
        c = self.char_configs[name]
        values = batch.values[column]
        lines = batch.lines[column]
        times = batch.times.get(column) if batch.times else None
        first = eng.values_seen
        meta = [(batch.file, ln, times[k] if times else None) for k, ln in enumerate(lines)]
        out: LiveOutput = eng.push(values, meta)
        self.counts[name] = self.counts.get(name, 0) + len(values)
        self.store.history.add_points(name, first, values, lines, batch.file, times, written)
        records: list[dict[str, Any]] = []
        if out.problem is not None:  # this characteristic has no limits; the others go on
            records.append({"type": "error", "characteristic": name, "problem": out.problem})
            self.store.set_meta(LIMITS_REFUSED.format(name=name), out.problem)
        if out.limits is not None:
            self._record_limits(name, eng, out.limits, now)
            records.extend(limits_record(name, lim)
                           for lim in (out.limits.location, out.limits.dispersion))
        records.extend(_signal_record(name, f) for f in out.firings)
        raised += self._observe_judged(name, out, now)
        if c.lsl is not None or c.usl is not None:
            raised += self.alarms.observe_spec(name, first, values, c.lsl, c.usl, now,
                                               clear_after=c.clear_after)
        assert self.health is not None
        self.health.values_arrived(name, values)
        return records

    def _observe_judged(self, name: str, out: LiveOutput, now: float) -> list[AlarmEvent]:
        """Feed the points an engine judged (and where they fired) to the chart alarms."""
        fired: dict[str, dict[str, list[int]]] = {}
        for f in out.firings:
            fired.setdefault(f.chart, {}).setdefault(f.rule, []).append(f.index)
        clear_after = self.char_configs[name].clear_after
        events: list[AlarmEvent] = []
        for chart, (lo, hi) in out.judged.items():
            events += self.alarms.observe_chart(name, chart, lo, hi, fired.get(chart, {}), now,
                                                clear_after=clear_after)
        return events

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

    def _record_limits(
        self, name: str, eng: CharacteristicEngine, limits: LimitSet, now: float
    ) -> None:
        """Put new limits on the history: the first phase's as set by linewatch from its
        baseline, a later phase's with the reason and person that asked for it."""
        self.store.set_meta(LIMITS_REFUSED.format(name=name), "")  # limits exist now
        reason, actor, asked = "baseline", SYSTEM_ACTOR, False
        if eng.phase > 0:
            raw = self.store.get_meta(PHASE_REQUEST.format(name=name, phase=eng.phase))
            request = json.loads(raw) if raw else {}
            reason = request.get("reason") or "new baseline"
            actor = request.get("actor") or SYSTEM_ACTOR
            asked = True
        for lim in (limits.location, limits.dispersion):
            self.store.history.record_limits(
                Limits(name, lim.chart, lim.center, lim.ucl, lim.lcl, lim.sigma, eng.phase,
                       eng.phase_start),
                reason=reason, now=now, actor=actor, new_baseline=asked,
            )

    def _record_feed_event(
        self, ev: FeedEvent, now: float, raised: list[AlarmEvent] | None = None
    ) -> dict[str, Any]:
        self.store.history.add_feed_event(ev, now)
        stuck = ev.kind in ("stuck", "unstuck")
        events = self.alarms.observe_feed(ev, now, characteristic=ev.file if stuck else None)
        if raised is not None:
            raised += events
        record: dict[str, Any] = {"type": "feed", "event": ev.kind, "file": ev.file,
                                  "detail": ev.detail}
        if ev.kind == "times" and self.health is not None:
            record["backwards"], record["unreadable"] = self.health.time_counts(ev.file)
        return record

    def _step_down(self) -> None:
        """Drop everything held in memory and become a viewer; whoever collects next (maybe
        this instance again) resumes from what the store committed."""
        self.engines.clear()
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

    def _run_hooks(self, events: list[AlarmEvent]) -> None:
        for ev in events:
            if ev.alarm is None:  # about all alarms: a flood began or ended
                flood = self.alarms.flood()
                self.emit({"type": "flood", "event": ev.action,
                           "count": flood.count if flood else None})
        if not self.config.alarms.hook:
            return
        if self._hooks is None:
            from linewatch.alarms.hooks import HookRunner

            self._hooks = HookRunner(self.config.alarms.hook, self.config.alarms.hook_timeout,
                                     on_outcome=self._hook_outcome)
        for ev in events:
            if ev.action in ANNOUNCED and ev.alarm is not None:
                self._hooks.fire({**self.alarms.hook_payload(ev.alarm), "action": ev.action})

    def _hook_outcome(self, outcome: HookOutcome) -> None:
        if not outcome.ok:
            self.emit({"type": "hook", "alarm": outcome.alarm_id, "problem": outcome.message})

    def _emit_alarm_changes(self) -> None:
        """Print an `alarm` record for every alarm whose state changed since the last look
        (raised, acknowledged, shelved, returned, closed) — by any instance or the shell."""
        now = self.clock()
        current = {a.id: a for a in self.alarms.alarms()}
        seen = self._alarm_states
        changed = [a for a in current.values()
                   if seen.get(a.id) != (a.state(now), a.acknowledged_by, a.last_index)]
        gone = [i for i in seen if i not in current]
        for alarm_id in gone:
            record = self.store.alarms.get(alarm_id)
            if record is not None:
                changed.append(record)
        self._alarm_states = {a.id: (a.state(now), a.acknowledged_by, a.last_index)
                              for a in current.values()}
        for a in sorted(changed, key=lambda a: a.id):
            self.emit({"type": "alarm", **self.alarms.list_record(a, now)})

    # -- baselines --
    def new_baseline(self, characteristic: str, start_index: int, reason: str) -> None:
        """Start a new phase of limits (any instance may ask; the collector carries it out)."""
        request_new_baseline(self.store, characteristic, start_index, reason)

    def _serve_baseline_requests(self, now: float, raised: list[AlarmEvent]) -> None:
        for key, raw in self.store.meta_starting(BASELINE_REQUEST):
            if not raw:
                continue
            name = key[len(BASELINE_REQUEST):]
            self.store.set_meta(key, "")
            req = json.loads(raw)
            eng = self._engine(name)
            if eng is None:
                continue
            try:
                eng.new_baseline(int(req["start"]))
            except ValueError as exc:
                self.emit({"type": "baseline", "characteristic": name, "problem": str(exc)})
                continue
            self.store.audit.append(
                "new-baseline", name,
                {"start_index": eng.phase_start, "phase": eng.phase, "reason": req["reason"]},
                at=now, actor=req.get("actor"),
            )
            self.store.set_meta(LIMITS_REFUSED.format(name=name), "")  # judged afresh
            self.store.set_meta(PHASE_REQUEST.format(name=name, phase=eng.phase),
                                json.dumps({"reason": req["reason"], "actor": req.get("actor"),
                                            "start": eng.phase_start}))
            out = eng.settle()  # the new phase may already hold enough points for limits
            if out.problem is not None:  # ... or be refused again
                self.store.set_meta(LIMITS_REFUSED.format(name=name), out.problem)
                self.emit({"type": "error", "characteristic": name, "problem": out.problem})
            if out.limits is not None:
                self._record_limits(name, eng, out.limits, now)
                for lim in (out.limits.location, out.limits.dispersion):
                    self.emit(limits_record(name, lim))
            raised += self._observe_judged(name, out, now)
            for f in out.firings:
                self.emit(_signal_record(name, f))
            self.store.ingest.save_engine(name, json.dumps(eng.to_state()), now)
            self.emit({"type": "baseline", "characteristic": name, "start_index": eng.phase_start,
                       "reason": req["reason"]})


def _signal_record(name: str, f: Firing) -> dict[str, Any]:
    """A `check`-style signal record plus the file and, when the row has one, its time."""
    # the monitor tags each row with (file, line, time); a restored engine gives it back as a
    # JSON list of the same three
    tag = cast("tuple[str, int, str | None] | None", f.meta)
    file, line, when = tag if tag else (None, -1, None)
    rec = signal_record(name, f.chart, f.rule, f.index, int(line), f.value)
    rec["file"] = file
    if when:
        rec["time"] = when
    return rec


def _store_replaced(exc: BaseException) -> bool:
    """SQLite says the store file is damaged or was replaced under us ("file is not a
    database", "malformed"): unlike a full disk or a lock, no retry can mend that."""
    import sqlite3

    return isinstance(exc, sqlite3.DatabaseError) and not isinstance(exc, sqlite3.OperationalError)


def request_new_baseline(store: Store, characteristic: str, start_index: int,
                         reason: str) -> None:
    """Ask the collector (whichever instance holds the lease) for a new phase of limits from
    `start_index`; the screen's close-up and `linewatch baseline` both ask this way."""
    if not reason.strip():
        raise LinewatchError("a reason is required for a new baseline")
    request = json.dumps({"start": int(start_index), "reason": reason.strip(),
                          "actor": _actor()})
    with store.transaction():
        store.set_meta(BASELINE_REQUEST + characteristic, request)


def _stopped_payload(problem: str, now: float) -> dict[str, Any]:
    """What the hook receives about a "monitoring stopped" alarm that could not be stored."""
    from linewatch.alarms.book import FEED_CHART, FEED_HEALTH, MONITOR_SUBJECT, STOPPED_RULE
    from linewatch.domain.clock import iso_time

    return {"id": None, "kind": FEED_HEALTH, "characteristic": MONITOR_SUBJECT,
            "chart": FEED_CHART, "rule": STOPPED_RULE, "priority": 1, "state": "unacknowledged",
            "raised_at": iso_time(now), "action": "raised",
            "description": f"monitoring stopped: {problem}", "detail": problem,
            "reaction_plan": "", "stored": False}


def _actor() -> str:
    from linewatch.store.actor import current_actor

    return current_actor()

