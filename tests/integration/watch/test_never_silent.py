"""A collector pass that fails is never silent: the failure is reported at once, shown to the
screen, the rows are read again after a back-off (nothing lost, nothing doubled), and after three
failures in a row a priority-1 "monitoring stopped" alarm reaches the hook."""

from __future__ import annotations

import json
import sys
import threading

import numpy as np

from linewatch.config.loading import parse_config
from linewatch.pipeline.collector import Collector
from linewatch.pipeline.monitor import Monitor
from linewatch.pipeline.plan import WatchPlan
from linewatch.present.face import MonitorFace
from tests.integration.watch.helpers import HEADER, rows_text, wait_until


def test_failing_passes_are_reported_retried_and_alarmed(tmp_path, monkeypatch):
    log = tmp_path / "line.csv"
    values = np.tile([10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8], 4)
    log.write_text(HEADER + "".join(rows_text(values)))
    hooked = tmp_path / "hook.jsonl"
    hook = [sys.executable, "-c",
            f"import sys; open({str(hooked)!r}, 'a').write(sys.stdin.read().strip() + '\\n')"]
    config = parse_config(f'[[feed]]\npaths = ["{log}"]\n[alarms]\nhook = {json.dumps(hook)}\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=20)
    monitor = Monitor(plan, tmp_path / "state")
    face = MonitorFace(monitor)
    records: list[dict] = []
    monitor.emit = records.append
    real = Collector.process
    failing = {"left": 4}
    problems_seen: list[str] = []

    def flaky(collector, chunks, now):  # an injected fault inside the pass, after the read
        if failing["left"] > 0:
            failing["left"] -= 1
            raise RuntimeError("injected fault")
        return real(collector, chunks, now)

    monkeypatch.setattr(Collector, "process", flaky)
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
    worker.start()
    try:
        wait_until(lambda: any(r.get("type") == "error" for r in records), 10)
        problems_seen.append(face.snapshot().problem)  # the screen shows it at once
        wait_until(lambda: len(face.store.history.points("od")) == 40, 30)
        wait_until(lambda: hooked.exists() and hooked.read_text().strip(), 30)
        wait_until(lambda: any(r.get("resolved") for r in records if r.get("type") == "error"), 30)
    finally:
        stop.set()
        worker.join(timeout=20)
    errors = [r for r in records if r.get("type") == "error" and r["problem"]]
    assert [r["failures"] for r in errors] == [1, 2, 3, 4]
    assert all("injected fault" in r["problem"] for r in errors)
    assert "injected fault" in problems_seen[0]
    assert face.snapshot().problem == ""
    points = face.store.history.points("od")
    assert [p.value for p in points] == values.tolist()  # nothing lost, nothing doubled
    payload = json.loads(hooked.read_text().splitlines()[0])
    assert payload["priority"] == 1 and payload["rule"] == "stopped"
    assert "injected fault" in payload["detail"]
    stopped = [a for a in face.alarms.alarms(include_closed=True) if a.rule == "stopped"]
    assert len(stopped) == 1 and not stopped[0].active  # returned once a pass succeeded
    face.close()


def test_a_pass_rolled_back_by_the_store_is_counted_and_described_once(tmp_path):
    """A store fault at a pass's last write (the engine state) rolls the pass back; the rows
    are read again. What this instance says it read (the headless summary's `read`) counts
    them once, and a characteristic found in the data keeps its stored settings."""
    log = tmp_path / "line.csv"
    values = np.tile([10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8], 4)
    log.write_text(HEADER + "".join(rows_text(values)))
    config = parse_config(f'[[feed]]\npaths = ["{log}"]\n'
                          '[alarms]\nreasons = ["reamer worn", "fixture loose"]\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=20)
    monitor = Monitor(plan, tmp_path / "state")
    records: list[dict] = []
    monitor.emit = records.append
    # an operational error (the kind a full disk or an I/O error gives) at the pass's last
    # write: the trigger reads a table that is not there
    monitor.store.execute("CREATE TRIGGER refuse BEFORE INSERT ON engine_state "
                          "BEGIN SELECT * FROM disk_trouble; END")
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
    worker.start()
    face = MonitorFace(monitor)
    try:
        wait_until(lambda: any(r.get("type") == "error" and r.get("problem")
                               for r in records), 10)
        face.store.execute("DROP TRIGGER refuse")  # the fault goes away
        wait_until(lambda: any(r.get("resolved") for r in records if r.get("type") == "error"),
                   30)
        wait_until(lambda: len(face.store.history.points("od")) == 40, 30)
    finally:
        stop.set()
        worker.join(timeout=20)
    assert "disk_trouble" in next(r["problem"] for r in records if r.get("type") == "error")
    assert monitor.counts == {"od": 40}
    settings = face.store.history.settings("od")
    assert settings is not None and settings.reasons == ["reamer worn", "fixture loose"]
    face.close()
