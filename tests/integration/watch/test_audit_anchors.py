"""A collector configured with an anchor file writes the trail's head there while it runs and
when it stops (a real `watch` process), and `audit verify --anchor` holds the store to it."""

from __future__ import annotations

import subprocess
import sys
import time
from pathlib import Path

from linewatch.store.db import Store
from tests.integration.watch.helpers import (
    HEADER,
    process_series,
    rows_text,
    start_watch,
    stop,
    wait_caught_up,
)


def test_collector_anchors_every_n_entries_and_at_stop(tmp_path: Path) -> None:
    log = tmp_path / "od.csv"
    log.write_text(HEADER + "".join(rows_text(process_series(200, seed=5))))
    (tmp_path / "line.toml").write_text(
        '[monitor]\naudit_anchor_file = "trail/anchors.log"\naudit_anchor_every = 3\n'
    )
    (tmp_path / "trail").mkdir()
    state = tmp_path / "state"
    with (tmp_path / "out.jsonl").open("w") as out:  # a full pipe would stall the collector
        proc = start_watch([str(log)], state, "-c", str(tmp_path / "line.toml"), stdout=out)
    wait_caught_up(state, log)
    anchors = tmp_path / "trail" / "anchors.log"
    deadline = time.monotonic() + 15  # the next housekeeping beat writes the periodic anchor
    while time.monotonic() < deadline and "why=every" not in (
        anchors.read_text() if anchors.exists() else ""
    ):
        time.sleep(0.1)
    _, err = stop(proc)
    assert proc.returncode == 0, err
    lines = (tmp_path / "trail" / "anchors.log").read_text().splitlines()
    with Store(state, create=False) as store:
        entries, head = store.audit.head()
    assert entries >= 3  # config-loaded, limits-set and alarms: enough for a periodic anchor
    assert lines[-1].startswith(f"linewatch-audit-anchor v1 entries={entries} head={head} ")
    assert "why=stop" in lines[-1]
    assert any("why=every" in x for x in lines[:-1]), lines
    verify = subprocess.run(
        [sys.executable, "-m", "linewatch", "audit", "verify", "--state-dir", str(state),
         "--anchor", str(tmp_path / "trail" / "anchors.log")],
        capture_output=True, text=True, timeout=60,
    )
    assert verify.returncode == 0 and "chain + anchors" in verify.stdout, verify.stdout


def test_collector_sends_anchors_to_syslog_every_n_entries_and_at_stop(tmp_path: Path) -> None:
    """A UDP socket on 127.0.0.1 plays the log host of `audit_anchor_syslog`."""
    import socket

    host = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    host.bind(("127.0.0.1", 0))
    host.settimeout(15.0)
    log = tmp_path / "od.csv"
    log.write_text(HEADER + "".join(rows_text(process_series(200, seed=5))))
    (tmp_path / "line.toml").write_text(
        f'[monitor]\naudit_anchor_syslog = "127.0.0.1:{host.getsockname()[1]}"\n'
        "audit_anchor_every = 3\n"
    )
    state = tmp_path / "state"
    try:
        with (tmp_path / "out.jsonl").open("w") as out:
            proc = start_watch([str(log)], state, "-c", str(tmp_path / "line.toml"), stdout=out)
        wait_caught_up(state, log)
        messages = [host.recvfrom(65536)[0].decode()]  # the first periodic anchor
        _, err = stop(proc)
        assert proc.returncode == 0, err
        while "why=stop" not in messages[-1]:
            messages.append(host.recvfrom(65536)[0].decode())
    finally:
        host.close()
    with Store(state, create=False) as store:
        entries, head = store.audit.head()
    assert "why=every" in messages[0]
    assert f"entries={entries} head={head} " in messages[-1]
    assert all(m.startswith("<13>linewatch-audit: linewatch-audit-anchor v1 ") for m in messages)


def test_the_screens_acknowledgements_are_signed_with_the_configured_key(tmp_path: Path) -> None:
    """The screen acts through a store connection of its own: it must sign as the collector
    does, or every acknowledgement on a keyed line is refused."""
    import threading

    from linewatch.config.loading import parse_config
    from linewatch.pipeline.monitor import Monitor
    from linewatch.pipeline.plan import WatchPlan
    from linewatch.present.face import MonitorFace
    from linewatch.store.audit import key_id_of

    log = tmp_path / "od.csv"
    log.write_text(HEADER + "".join(rows_text(process_series(200, seed=5))))
    key = tmp_path / "audit.key"
    key.write_text("a-key-of-at-least-16-bytes\n")
    config = parse_config(f'[monitor]\naudit_key_file = "{key}"\n[[feed]]\npaths = ["{log}"]\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=20)
    monitor = Monitor(plan, tmp_path / "state")
    stop_event = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop_event,), daemon=True)
    worker.start()
    face = MonitorFace(monitor)
    try:
        deadline = time.monotonic() + 20
        while time.monotonic() < deadline and not face.store.alarms.open():
            time.sleep(0.05)
        first = face.store.alarms.open()[0]
        face.acknowledge([first.id], "tool wear")
    finally:
        stop_event.set()
        worker.join(timeout=10)
        face.close()
    with Store(tmp_path / "state", create=False) as store:
        acks = [e for e in store.audit.entries() if e.action == "acknowledged"]
    assert acks and acks[0].key_id == key_id_of(b"a-key-of-at-least-16-bytes")
