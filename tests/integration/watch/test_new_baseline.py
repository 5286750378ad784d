"""A new baseline asked for from the screen (or any instance): the collector starts a new phase
at the chosen point, re-estimates the limits from the next N points, keeps the old limits on the
history and records who asked and why in the audit trail."""

from __future__ import annotations

import json
import threading
import time

import numpy as np

from linewatch.config.loading import parse_config
from linewatch.pipeline.monitor import Monitor
from linewatch.pipeline.plan import WatchPlan
from linewatch.present.face import MonitorFace
from tests.integration.watch.helpers import HEADER, rows_text, wait_until


def _collect(log, state_dir) -> tuple[MonitorFace, threading.Event, threading.Thread]:
    """A collector on `log` (baseline of 20 points) running on a thread, with its face."""
    config = parse_config(f'[[feed]]\npaths = ["{log}"]\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=20)
    monitor = Monitor(plan, state_dir)
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
    worker.start()
    return MonitorFace(monitor), stop, worker


def test_a_new_phase_gets_its_own_limits_and_an_audit_entry(tmp_path):
    log = tmp_path / "line.csv"
    first = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 3  # 30 points near 10
    second = list(np.array(first) + 2.0)  # after a process change: 30 points near 12
    log.write_text(HEADER + "".join(rows_text(first + second)))
    face, stop, worker = _collect(log, tmp_path / "state")
    try:
        history = face.store.history
        wait_until(lambda: history.current_limits("od"))
        wait_until(lambda: len(history.points("od")) == 60)
        face.new_baseline("od", 30, "new die fitted")
        wait_until(lambda: any(r.limits.phase == 1 for r in history.limits_history("od")))
    finally:
        stop.set()
        worker.join(timeout=10)
    records = history.limits_history("od")
    old = [r for r in records if r.limits.chart == "individuals" and r.limits.phase == 0]
    new = [r for r in records if r.limits.chart == "individuals" and r.limits.phase == 1]
    assert len(old) == 1 and len(new) == 1  # the old limits stay on the history
    assert old[0].limits.center == np.mean(first[:20])
    assert new[0].limits.start_index == 30
    assert new[0].limits.center == np.mean(second[:20])  # the next 20 points after point 30
    assert new[0].reason == "new die fitted"
    entries = face.store.audit.entries()
    asked = [e for e in entries if e.action == "new-baseline"]
    assert asked and all(json.loads(e.payload)["reason"] == "new die fitted" for e in asked)
    automatic = [e for e in entries if e.action == "limits-set"]
    assert automatic and all(e.actor == "linewatch" for e in automatic)
    assert face.store.audit.verify().ok
    face.close()


def test_every_instance_sees_a_new_phase_waiting_for_its_limits(tmp_path):
    log = tmp_path / "line.csv"
    base = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 5  # 50 points
    log.write_text(HEADER + "".join(rows_text(base)))
    face, stop, worker = _collect(log, tmp_path / "state")
    try:
        wait_until(lambda: len(face.store.history.points("od")) == 50)
        face.new_baseline("od", 40, "gauge recalibrated")  # only 10 of 20 points are there
        wait_until(lambda: face.detail("od").pending_phase_start == 40)
        with log.open("a") as f:
            f.writelines(rows_text(base[:15], start=50))
        wait_until(lambda: face.detail("od").pending_phase_start is None)
    finally:
        stop.set()
        worker.join(timeout=10)
    detail = face.detail("od")
    assert [p[0] for p in detail.location.phase_limits] == [0, 40]
    face.close()


def test_a_new_baseline_while_rows_arrive_never_stops_collection(tmp_path):
    """The stall once seen by a user: a new phase that reaches back over a point which fired
    under the old limits re-reported that firing when the new limits formed, outside the points
    being judged, and every later pass failed. Collection must go on and the old firing must be
    counted once."""
    log = tmp_path / "line.csv"
    base = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 5  # 50 points
    base[45] = 14.0  # beyond the first phase's limits; inside the new baseline window
    log.write_text(HEADER + "".join(rows_text(base)))
    face, stop, worker = _collect(log, tmp_path / "state")
    records: list[dict] = []
    face.monitor.emit = records.append
    try:
        wait_until(lambda: len(face.store.history.points("od")) == 50)
        face.new_baseline("od", 40, "new die fitted")  # 10 of the 20 points are there
        wait_until(lambda: face.detail("od").pending_phase_start == 40)
        more = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 3
        for k in range(0, 30, 5):  # rows keep arriving, a few at a time
            with log.open("a") as f:
                f.writelines(rows_text(more[k:k + 5], start=50 + k))
            time.sleep(0.2)
        wait_until(lambda: len(face.store.history.points("od")) == 80)
        wait_until(lambda: face.detail("od").pending_phase_start is None)
        # later passes, in which the stall showed: each stores what it read
        for k in range(80, 90, 5):
            with log.open("a") as f:
                f.writelines(rows_text(more[:5], start=k))
            wait_until(lambda k=k: len(face.store.history.points("od")) == k + 5)
    finally:
        stop.set()
        worker.join(timeout=10)
    assert [r for r in records if r.get("type") == "error"] == []
    assert face.monitor.failures == 0
    raised = [json.loads(e.payload) for e in face.store.audit.entries()
              if e.action in ("raised", "re-raised")]
    at_45 = [p for p in raised if p.get("first_index", p.get("index")) == 45
             and p["chart"] == "individuals"]
    assert len(at_45) == 1  # judged once, in its own phase
    face.close()
