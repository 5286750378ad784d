"""The collector's work on the store, each unit in ONE transaction: a poll's chunks (file
offsets, points, limits, feed events, alarms, audit and each touched engine's state) and a beat
(feed health, alarm timers, new-baseline requests, flood). A crash keeps all of a unit or none,
so a restart neither loses nor doubles a row or a request.

A `Collector` holds what the collecting instance keeps in memory — the engines and the feed
health — and is thrown away when the instance stops collecting or a unit fails (the next one
resumes from what the store committed). It knows nothing of leases, loops or hooks: what a unit
produced comes back as an `Outcome` for the caller to announce after the commit, so one poll can
be driven and checked on real files and a real store alone.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, cast

from linewatch.alarms.book import AlarmBook
from linewatch.alarms.lifecycle import SYSTEM_ACTOR, AlarmEvent
from linewatch.config.model import CharacteristicConfig
from linewatch.config.selection import chart_setup
from linewatch.domain.jsonl import (
    detector_limits_record,
    limits_record,
    rejected_record,
    signal_record,
)
from linewatch.domain.records import FeedEvent, Limits
from linewatch.engine.live import CharacteristicEngine, LiveOutput
from linewatch.engine.live_state import restore_engine, save_state
from linewatch.engine.setup import Firing
from linewatch.engine.stepped_live import SteppedEngine, SteppedOutput
from linewatch.engine.stepped_live_state import restore_stepped, save_stepped
from linewatch.feeds.health import FeedHealth
from linewatch.pipeline.plan import Characteristics, WatchPlan
from linewatch.pipeline.stepped_rows import is_stepped, stepped_rows
from linewatch.store.stepped_points import StoredSteppedPoint

if TYPE_CHECKING:
    from linewatch.engine.limits import LimitSet
    from linewatch.feeds.batch import Batch
    from linewatch.feeds.tailer import TailChunk
    from linewatch.store.db import Store
    from linewatch.store.requests import BaselineRequest


@dataclass(slots=True)
class Outcome:
    """What one committed unit produced: records for the faces (jsonl of `check` plus feed,
    error and baseline records), alarm events for the hook, and what was read."""

    records: list[dict[str, Any]] = field(default_factory=list)
    raised: list[AlarmEvent] = field(default_factory=list)
    values: dict[str, int] = field(default_factory=dict)  # good values per characteristic
    rejected: int = 0  # rows rejected or not read
    rows: int = 0  # rows read


class Collector:
    """Engines and feed health of the collecting instance, and the units it commits.

    `guard` is called first inside every transaction; the lease loop passes a check that this
    instance still holds the collector lease (transactions are serialised, so a collector that
    stalled past its lease and was replaced rolls back instead of writing twice)."""

    def __init__(self, store: Store, alarms: AlarmBook, plan: WatchPlan,
                 characteristics: Characteristics, *,
                 guard: Callable[[], None] = lambda: None) -> None:
        self.store = store
        self.alarms = alarms
        self.plan = plan
        self.characteristics = characteristics
        self.guard = guard
        mon = plan.config.monitor
        self.health = FeedHealth(mon.stale_after, mon.stuck_repeats)
        self.engines: dict[str, CharacteristicEngine] = {}
        self.stepped: dict[str, SteppedEngine] = {}  # charts whose limits step
        self._saved: set[str] = set()  # discovered characteristics whose settings are stored
        with store.transaction():  # (settings of discovered ones follow today's options)
            for name, text in store.ingest.engines().items():
                c = self._config(name)
                if c is not None and is_stepped(c):
                    self.stepped[name] = restore_stepped(chart_setup(c, plan.baseline),
                                                         json.loads(text), local_offset())
                elif c is not None:
                    self.engines[name] = restore_engine(chart_setup(c, plan.baseline),
                                                        json.loads(text))

    # -- a poll -----------------------------------------------------------------------------

    def process(self, chunks: list[TailChunk], now: float) -> Outcome:
        """Everything one poll read, in one transaction: file offsets, points, limits, alarms,
        audit and each touched characteristic's engine state (saved once, at the end), so a
        folder of many small files costs one commit. On any exception the transaction is
        rolled back and this collector must be discarded (its memory ran ahead)."""
        out = Outcome()
        touched: set[str] = set()
        with self.store.transaction():
            self.guard()
            for chunk in chunks:
                self._process_chunk(chunk, now, out, touched)
            for name in sorted(touched):
                self._save_engine(name, now)
        out.rows = sum(c.batch.rows for c in chunks if c.batch is not None)
        return out

    def _process_chunk(self, chunk: TailChunk, now: float, out: Outcome,
                       touched: set[str]) -> None:
        """One file's part of a poll (inside the poll's transaction)."""
        for ev in chunk.events:
            if ev.kind != "waiting":  # a pattern with no file yet shows as waiting
                self.health.file_event(ev, now)
            out.records.append(self._record_feed_event(ev, now, out.raised))
        batch = chunk.batch
        if batch is not None:
            for n in batch.notices:  # e.g. a duplicate column name: said once per file
                detail = f"line {n.line}: {n.text}"
                if n.kind == "no-header":
                    detail = f"{batch.unread:,} lines from line {n.line} on not read: {n.text}"
                out.records.append(self._record_feed_event(
                    FeedEvent(n.kind, n.file, detail), now, out.raised))
            if batch.unread:  # lines of a file without a header: counted, said once above
                out.rejected += batch.unread
                self.store.ingest.add_unread_lines(batch.file, batch.unread)
            if batch.rows:
                self._headed(batch.file, now, out)
            for r in batch.rejected:
                out.records.append(rejected_record(r))
                self.store.history.add_feed_event(
                    FeedEvent("rejected", r.file, f"line {r.line}: {r.reason}"), now)
            out.rejected += len(batch.rejected)
            # rows caught up from a file's history count as written when the file says (its
            # ages and staleness then tell the truth right after a start)
            written = now if chunk.written_at is None else min(now, chunk.written_at)
            for column, values in batch.values.items():
                name = self.characteristics.name_for_column(column)
                c = None if name is None else self._config(name)
                if c is not None and is_stepped(c):
                    continue  # (below: it may read several columns)
                if name is None or len(values) == 0 or self._engine(name) is None:
                    continue
                touched.add(name)
                out.values[name] = out.values.get(name, 0) + len(values)
                self._process_values(name, batch, column, now, written, out)
            for name in self._stepped_in(batch):
                touched.add(name)
                self._process_stepped(name, batch, now, written, out)
            if batch.rows:
                self.health.rows_arrived(batch.file, batch.rows, written)
                self._count_times(batch)
        if chunk.state is not None:
            self.store.ingest.save_file(chunk.state, now)

    def _headed(self, file: str, now: float, out: Outcome) -> None:
        """Rows of a file counted as having no header are read now (a header was added, or
        the file was replaced by one with a header): say so, return its no-header alarm and
        clear the count, so the file no longer shows as unread."""
        before = self.store.ingest.take_unread_lines(file)
        if before:
            out.records.append(self._record_feed_event(FeedEvent(
                "header", file, f"a header to go by now: its rows are read; {before:,} lines "
                "without one were counted before"), now, out.raised))

    def _count_times(self, batch: Batch) -> None:
        """Count the batch's time stamps that go backwards or cannot be read (the rows are
        kept); the counts are saved with the offsets, so a restart neither loses nor repeats
        them."""
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
        before = self.health.time_counts(batch.file)
        if before == (0, 0):
            before = self.store.ingest.time_counts(batch.file) or before
        self.health.times_arrived(batch.file, times, before)
        after = self.health.time_counts(batch.file)
        if after != before:
            self.store.ingest.save_time_counts(batch.file, after)

    def _process_values(self, name: str, batch: Batch, column: str, now: float,
                        written: float, out: Outcome) -> None:
        eng = self.engines[name]
        c = self.characteristics.configs[name]
        values: list[float] = batch.values[column].tolist()
        lines: list[int] = batch.lines[column].tolist()
        times = batch.times.get(column) if batch.times else None
        first = eng.values_seen
        meta = [(batch.file, ln, times[k] if times else None) for k, ln in enumerate(lines)]
        if first == 0 and eng.limits is not None and eng.phase == 0:
            # known limits (centre and sigma given) hold from the first point: put them on
            # the history with the first points, as estimated ones are when they form
            self._record_limits(name, eng, eng.limits, now)
            out.records.extend(limit_records(name, eng, eng.limits))
        live: LiveOutput = eng.push(values, meta)
        self.store.history.add_points(name, first, values, lines, batch.file, times, written)
        if live.problem is not None:  # this characteristic has no limits; the others go on
            out.records.append({"type": "error", "characteristic": name,
                                "problem": live.problem})
            self.store.ingest.set_limits_refused(name, live.problem)
        if live.limits is not None:
            self._record_limits(name, eng, live.limits, now)
            out.records.extend(limit_records(name, eng, live.limits))
        out.records.extend(signal_of(name, f) for f in live.firings)
        out.raised.extend(self._observe_judged(name, live, now))
        if c.lsl is not None or c.usl is not None:
            out.raised.extend(self.alarms.observe_spec(name, first, values, c.lsl, c.usl, now,
                                                       clear_after=c.clear_after))
        self.health.values_arrived(name, values)

    def _stepped_in(self, batch: Batch) -> list[str]:
        """The characteristics with stepped limits this batch holds rows for."""
        names = []
        for name, c in list(self.characteristics.configs.items()):
            if not is_stepped(c):
                continue
            if c.result_column is not None:
                if c.result_column in batch.texts:
                    names.append(name)
            elif (c.count_column or c.column) in batch.values:
                names.append(name)
        if self.plan.discovers:  # (a discovered column charted by window or sample id)
            for column in batch.values:
                d = self._config(column)
                if d is not None and is_stepped(d) and column not in names:
                    names.append(column)
        return names

    def _process_stepped(self, name: str, batch: Batch, now: float, written: float,
                         out: Outcome) -> None:
        c = self.characteristics.configs[name]
        eng = self._stepped_engine(name)
        rows, refused = stepped_rows(c, batch)
        for r in refused:
            out.records.append(rejected_record(r))
            self.store.history.add_feed_event(
                FeedEvent("rejected", r.file, f"line {r.line}: {r.reason}"), now)
        out.rejected += len(refused)
        if c.subgroup_by:  # a sample left open closes `subgroup_timeout` after its last row
            rows = [(lab, x, n, written if t is None else t, m) for lab, x, n, t, m in rows]
        first = eng.rows_seen
        live = eng.push(rows)
        values = [float(r[1] or 0.0) for r in rows]
        tags = [cast("list[Any]", r[4]) for r in rows]
        self.store.history.add_points(name, first, values, [int(t[1]) for t in tags],
                                      batch.file, [t[2] for t in tags], written)
        out.values[name] = out.values.get(name, 0) + len(rows)
        self._take_stepped(name, eng, live, now, out)
        if not c.is_attribute:  # (results and counts repeat by nature: no stuck gauge)
            self.health.values_arrived(name, values)

    def _take_stepped(self, name: str, eng: SteppedEngine, live: SteppedOutput, now: float,
                      out: Outcome) -> None:
        """Store what a stepped engine produced: its points with their limits, new limits,
        signals and the alarms of the points it judged."""
        records = []
        for p in live.points:
            tag = cast("list[Any] | None", p.meta)
            file, line, when = tag if tag else (None, -1, None)
            records.append(StoredSteppedPoint(name, p.chart, p.index, p.value, p.n, p.center, p.ucl,
                                         p.lcl, p.sigma, p.phase, int(line), file, when))
        self.store.stepped.put(records)
        if live.problem is not None:
            out.records.append({"type": "error", "characteristic": name,
                                "problem": live.problem})
            if eng.problem is not None:  # limits refused for this phase
                self.store.ingest.set_limits_refused(name, eng.problem)
        if live.model is not None:
            self.store.ingest.set_limits_refused(name, "")
            firsts: dict[str, StoredSteppedPoint] = {}
            for r in records:
                if r.center is not None and r.chart not in firsts:
                    firsts[r.chart] = r
            reason, actor, asked = "baseline", SYSTEM_ACTOR, False
            if eng.phase > 0:
                request = self.store.requests.for_phase(name, eng.phase)
                reason = (request.reason if request else "") or "new baseline"
                actor = (request.actor if request else None) or SYSTEM_ACTOR
                asked = True
            for chart, r in firsts.items():  # (the limits step: those of its first point)
                assert r.ucl is not None and r.lcl is not None and r.sigma is not None
                self.store.history.record_limits(
                    Limits(name, chart, r.center or 0.0, r.ucl, r.lcl, r.sigma, eng.phase,
                           eng.phase_start),
                    reason=reason, now=now, actor=actor, new_baseline=asked)
                out.records.append({"type": "limits", "characteristic": name, "chart": chart,
                                    "center": r.center, "ucl": None, "lcl": None,
                                    "varies": True})
        out.records.extend(signal_of(name, f) for f in live.firings)
        out.raised.extend(self._observe_judged(name, live, now))

    def _stepped_engine(self, name: str) -> SteppedEngine:
        eng = self.stepped.get(name)
        if eng is None:
            c = self.characteristics.configs[name]
            eng = self.stepped[name] = SteppedEngine(chart_setup(c, self.plan.baseline),
                                                     local_offset())
        return eng

    def _save_engine(self, name: str, now: float) -> None:
        if name in self.stepped:
            state = save_stepped(self.stepped[name])
        else:
            state = save_state(self.engines[name])
        self.store.ingest.save_engine(name, json.dumps(state), now)

    # -- a beat -----------------------------------------------------------------------------

    def beat(self, now: float) -> Outcome:
        """Feed health (stale files, stuck gauges), alarm timers (shelves, escalation), the
        new-baseline requests waiting and the flood check, in one transaction."""
        out = Outcome()
        events = self.health.tick(now)
        with self.store.transaction():
            self.guard()
            for ev in events:
                out.records.append(self._record_feed_event(ev, now, out.raised))
            out.raised.extend(self.alarms.tick(now))
            for name, eng in self.stepped.items():  # samples and windows the clock closed
                live = eng.expire(now)
                if live.points or live.problem:
                    self._take_stepped(name, eng, live, now, out)
                    self._save_engine(name, now)
            for request in self.store.requests.pending():
                self._carry_out(request, now, out)
            out.raised.extend(self.alarms.check_flood(now))
        return out

    def _carry_out(self, req: BaselineRequest, now: float, out: Outcome) -> None:
        """Start the new phase a request asks for (or say why it cannot start), and mark the
        request settled in the same transaction, so it is carried out exactly once."""
        name = req.characteristic
        c = self._config(name)
        if c is not None and is_stepped(c):
            self._carry_out_stepped(req, now, out)
            return
        eng = self._engine(name)
        if eng is None:
            problem = f"{name} is not charted by this collector"
            self.store.requests.refused(req.id, problem, now)
            out.records.append({"type": "baseline", "characteristic": name, "problem": problem})
            return
        if not self._begin_phase(req, eng, now, out):
            return
        live = eng.settle()  # the new phase may already hold enough points for limits
        if live.problem is not None:  # ... or be refused again
            self.store.ingest.set_limits_refused(name, live.problem)
            out.records.append({"type": "error", "characteristic": name,
                                "problem": live.problem})
        if live.limits is not None:
            self._record_limits(name, eng, live.limits, now)
            out.records.extend(limit_records(name, eng, live.limits))
        out.raised.extend(self._observe_judged(name, live, now))
        out.records.extend(signal_of(name, f) for f in live.firings)
        self.store.ingest.save_engine(name, json.dumps(save_state(eng)), now)
        out.records.append({"type": "baseline", "characteristic": name,
                            "start_index": eng.phase_start, "reason": req.reason})

    def _begin_phase(self, req: BaselineRequest, eng: CharacteristicEngine | SteppedEngine,
                     now: float, out: Outcome) -> bool:
        """Start the requested phase on either kind of engine, audited and answered; False
        (and the request refused with the reason) when the engine cannot start it there."""
        name = req.characteristic
        try:
            eng.new_baseline(req.start_index)
        except ValueError as exc:
            self.store.requests.refused(req.id, str(exc), now)
            out.records.append({"type": "baseline", "characteristic": name, "problem": str(exc)})
            return False
        self.store.audit.append(
            "new-baseline", name,
            {"start_index": eng.phase_start, "phase": eng.phase, "reason": req.reason},
            at=now, actor=req.actor,
        )
        self.store.requests.carried_out(req.id, eng.phase, eng.phase_start, now)
        self.store.ingest.set_limits_refused(name, "")  # the new phase is judged afresh
        return True

    def _carry_out_stepped(self, req: BaselineRequest, now: float, out: Outcome) -> None:
        """`_carry_out` for a chart whose limits step."""
        name = req.characteristic
        eng = self._stepped_engine(name)
        if not self._begin_phase(req, eng, now, out):
            return
        self._take_stepped(name, eng, eng.settle(), now, out)
        self._save_engine(name, now)
        out.records.append({"type": "baseline", "characteristic": name,
                            "start_index": eng.phase_start, "reason": req.reason})

    # -- shared -----------------------------------------------------------------------------

    def _config(self, name: str) -> CharacteristicConfig | None:
        """How `name` is charted; a discovered one has its settings stored once per collector
        (inside the caller's transaction, so a rolled-back unit stores them again)."""
        c = self.characteristics.config_for(name)
        if c is not None and name not in self._saved and self.characteristics.is_discovered(name):
            self.store.history.save_characteristics([c])
            self._saved.add(name)
        return c

    def _engine(self, name: str) -> CharacteristicEngine | None:
        eng = self.engines.get(name)
        if eng is None:
            c = self._config(name)
            if c is None:
                return None
            eng = CharacteristicEngine(chart_setup(c, self.plan.baseline))
            self.engines[name] = eng
        return eng

    def _observe_judged(self, name: str, live: LiveOutput | SteppedOutput, now: float
                        ) -> list[AlarmEvent]:
        """Feed the points an engine judged (and where they fired) to the chart alarms."""
        # a detector watches the location statistic: its firings join the location chart's
        # alarm (one special cause, one alarm) and mark that chart's points
        engine = self.engines.get(name)
        location = engine.setup.charts[0] if engine is not None else ""
        detectors = {d.id for d in engine.setup.detectors} if engine is not None else set()
        fired: dict[str, dict[str, list[int]]] = {}
        for f in live.firings:
            chart = location if f.chart in detectors else f.chart
            fired.setdefault(chart, {}).setdefault(f.rule, []).append(f.index)
        clear_after = self.characteristics.configs[name].clear_after
        events: list[AlarmEvent] = []
        judged = dict(live.judged)
        for det in detectors:
            lo, hi = judged.pop(det, (None, None))
            if lo is not None and hi is not None:
                was = judged.get(location, (lo, hi))
                judged[location] = (min(was[0], lo), max(was[1], hi))
        for chart, (lo, hi) in judged.items():
            events += self.alarms.observe_chart(name, chart, lo, hi, fired.get(chart, {}), now,
                                                clear_after=clear_after)
        return events

    def _record_limits(
        self, name: str, eng: CharacteristicEngine, limits: LimitSet, now: float
    ) -> None:
        """Put new limits on the history: the first phase's as set by linewatch from its
        baseline, a later phase's with the reason and person that asked for it."""
        self.store.ingest.set_limits_refused(name, "")  # limits exist now
        reason, actor, asked = "baseline", SYSTEM_ACTOR, False
        if eng.phase > 0:
            request = self.store.requests.for_phase(name, eng.phase)
            reason = (request.reason if request else "") or "new baseline"
            actor = (request.actor if request else None) or SYSTEM_ACTOR
            asked = True
        for lim in (limits.location, limits.dispersion):
            self.store.history.record_limits(
                Limits(name, lim.chart, lim.center, lim.ucl, lim.lcl, lim.sigma, eng.phase,
                       eng.phase_start),
                reason=reason, now=now, actor=actor, new_baseline=asked,
            )

    def _record_feed_event(
        self, ev: FeedEvent, now: float, raised: list[AlarmEvent]
    ) -> dict[str, Any]:
        self.store.history.add_feed_event(ev, now)
        stuck = ev.kind in ("stuck", "unstuck")
        raised += self.alarms.observe_feed(ev, now, characteristic=ev.file if stuck else None)
        record: dict[str, Any] = {"type": "feed", "event": ev.kind, "file": ev.file,
                                  "detail": ev.detail}
        if ev.kind == "times":
            record["backwards"], record["unreadable"] = self.health.time_counts(ev.file)
        return record


def local_offset() -> float:
    """The local clock's seconds east of UTC now (clock windows start on its quarter hours)."""
    import time

    return float(time.localtime().tm_gmtoff)


def limit_records(name: str, eng: CharacteristicEngine, limits: LimitSet) -> list[dict[str, Any]]:
    """The `check`-style limits records of new limits: both charts and each detector's."""
    from linewatch.engine.detectors.chart_limits import detector_limits

    out = [limits_record(name, lim) for lim in (limits.location, limits.dispersion)]
    for det in eng.setup.detectors:
        dl = detector_limits(det, limits.location)
        out.append(detector_limits_record(name, dl, dl.varies, dl.parameters))
    return out


def signal_of(name: str, f: Firing) -> dict[str, Any]:
    """A `check`-style signal record plus the file and, when the row has one, its time."""
    # the collector tags each row with (file, line, time); a restored engine gives it back as
    # a JSON list of the same three
    tag = cast("tuple[str, int, str | None] | None", f.meta)
    file, line, when = tag if tag else (None, -1, None)
    rec = signal_record(name, f.chart, f.rule, f.index, int(line), f.value, f.side)
    rec["file"] = file
    if when:
        rec["time"] = when
    return rec
