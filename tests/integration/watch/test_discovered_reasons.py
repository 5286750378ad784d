"""A characteristic found in long-layout data (not declared in the config) offers the config's
`[alarms] reasons` when acknowledged, not the built-in defaults."""

from __future__ import annotations

import threading

from linewatch.config.loading import parse_config
from linewatch.config.model import DEFAULT_REASONS
from linewatch.pipeline.monitor import Monitor
from linewatch.pipeline.plan import WatchPlan
from linewatch.present.face import MonitorFace
from tests.integration.watch.helpers import wait_until


def test_discovered_characteristics_offer_the_config_wide_reasons(tmp_path):
    log = tmp_path / "lab.csv"
    rows = "".join(f"2026-03-02T06:00:{i:02d},bore,{10 + (i % 5) * 0.01:.2f}\n"
                   for i in range(40))
    log.write_text("time,characteristic,value\n" + rows + "2026-03-02T06:01:00,bore,12.0\n")
    config = parse_config(
        f'[[feed]]\npaths = ["{log}"]\nlayout = "long"\n'
        '[alarms]\nreasons = ["reamer worn", "fixture loose"]\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=20)
    monitor = Monitor(plan, tmp_path / "state")
    face = MonitorFace(monitor)
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
    worker.start()
    try:
        wait_until(lambda: face.snapshot().alarms)
    finally:
        stop.set()
        worker.join(timeout=20)
    alarm = face.snapshot().alarms[0]
    assert alarm.characteristic == "bore"
    assert alarm.reasons == ["reamer worn", "fixture loose"] != list(DEFAULT_REASONS)
    face.acknowledge([alarm.id], "2")  # the number picks from the same list
    assert face.store.alarms.get(alarm.id).reason == "fixture loose"
    face.close()
