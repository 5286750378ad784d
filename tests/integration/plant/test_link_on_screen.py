"""While the central database is unreachable the line goes on monitoring, and the read model
the screen draws says since when the link is down and how many entries wait; the problem
never shows the URL's password; once the server is back the backlog goes and the words go."""

from __future__ import annotations

import threading
import time
from pathlib import Path

import psycopg

from linewatch.config.loading import parse_config
from linewatch.pipeline.monitor import Monitor
from linewatch.pipeline.plan import WatchPlan
from linewatch.plant.central import migrate
from linewatch.present.face import MonitorFace
from linewatch.present.plant_words import link_words
from tests.integration.plant.plant_lines import wait_until

HEADER = "time,part,od\n"


def _rows(start: int, n: int) -> str:
    return "".join(f"2026-03-02T07:{(start + i) // 60 % 60:02d}:{(start + i) % 60:02d},"
                   f"P{start + i},{10 + 0.1 * ((start + i) * 7 % 11 - 5) / 5:.4f}\n"
                   for i in range(n))


def test_link_down_shows_on_the_read_model_and_clears(own_pg, tmp_path: Path) -> None:
    url = own_pg.url.replace("postgres@", "postgres:n0t-shown@")  # trust: not checked
    with psycopg.connect(own_pg.url) as conn:
        migrate(conn)
    log = tmp_path / "line.csv"
    log.write_text(HEADER + _rows(0, 40))
    config = parse_config(f'[[feed]]\npaths = ["{log}"]\n'
                          f'[plant]\nurl = "{url}"\nline = "line-5"\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=20)
    monitor = Monitor(plan, tmp_path / "state")
    face = MonitorFace(monitor)
    records: list[dict] = []
    monitor.emit = records.append
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
    worker.start()
    try:
        wait_until(lambda: any(r.get("type") == "plant-link" and r["state"] == "up"
                               for r in records), 30, "link up")
        assert face.snapshot().plant_down_since is None
        own_pg.stop()
        before = time.time()
        with log.open("a") as f:
            f.write(_rows(40, 30))
        wait_until(lambda: len(face.store.history.points("od")) == 70, 30,
                   "the line kept monitoring")
        wait_until(lambda: face.snapshot().plant_down_since is not None, 30, "link down")
        snap = face.snapshot()
        assert snap.plant_waiting >= 30  # at least the 30 new points wait
        assert snap.plant_down_since is not None and snap.plant_down_since >= before - 1
        words = link_words(snap.plant_down_since, snap.plant_waiting)
        assert words.startswith("plant link down since ")
        assert words.endswith(f", {snap.plant_waiting} entries waiting")
        downs = [r for r in records if r.get("type") == "plant-link" and r["state"] == "down"]
        assert downs and all("n0t-shown" not in str(r) for r in records)
        own_pg.start()
        wait_until(lambda: face.snapshot().plant_down_since is None, 40, "link up again")
        wait_until(lambda: face.snapshot().plant_waiting == 0 and monitor.plant_link is not None
                   and monitor.plant_link.sent > 0, 40, "backlog sent")
    finally:
        stop.set()
        worker.join(timeout=30)
    with psycopg.connect(own_pg.url) as conn:
        count = conn.execute("SELECT COUNT(*) FROM linewatch.points WHERE plant_line = "
                             "'line-5'").fetchone()
    assert count is not None and count[0] == 70


def test_link_words_count_and_shorten() -> None:
    at = time.mktime((2026, 3, 2, 14, 2, 0, 0, 0, -1))
    assert link_words(at, 1) == "plant link down since 14:02, 1 entry waiting"
    assert link_words(at, 37) == "plant link down since 14:02, 37 entries waiting"
    assert link_words(at, 37, short=True) == "link down 14:02, 37 waiting"
    assert link_words(None, 37) == ""
