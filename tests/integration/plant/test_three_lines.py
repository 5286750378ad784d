"""Three collectors on three simulated lines forward to one central database: whatever
happens to a collector or to the server, the central database ends holding exactly each line's
rows (counted per table), no duplicates, and each line's audit chain verifies there."""

from __future__ import annotations

import time
from pathlib import Path

from tests.integration.plant.plant_lines import (
    Line,
    assert_central_holds_the_line,
    verify_central,
    wait_until,
)


def _init(url: str) -> None:
    import psycopg

    from linewatch.plant.central import migrate

    with psycopg.connect(url) as conn:
        migrate(conn)


def _settle(lines: list[Line], timeout: float = 90) -> None:
    """Every line has read its whole log and the central database has confirmed it all."""
    for line in lines:
        wait_until(line.read_all, timeout, f"{line.name} read its log")
    for line in lines:
        wait_until(lambda line=line: line.waiting() == 0, timeout, f"{line.name} forwarded")


def _finish(url: str, lines: list[Line]) -> None:
    _settle(lines)
    for line in lines:
        line.stop()
    for line in lines:
        counts = assert_central_holds_the_line(url, line)
        assert counts["points"] == 2 * line.written  # two characteristics, one point a row
        assert counts["audit"] > 0 and counts["alarms"] > 0
        done = verify_central(url, line.name)
        assert done.returncode == 0, done.stdout + done.stderr
        assert f"{counts['audit']} entries, chain intact" in done.stdout


def test_sigkill_of_a_collector_mid_forwarding(plant_db: str, tmp_path: Path) -> None:
    _init(plant_db)
    lines = [Line(tmp_path / f"l{i}", f"line-{i}", plant_db, seed=i) for i in (1, 2, 3)]
    for line in lines:
        line.write(60)
        line.start()
    for _ in range(6):
        for line in lines:
            line.write(40)
        time.sleep(0.4)
    lines[1].kill()  # in the middle of forwarding: rows keep arriving
    for line in lines:
        line.write(80)
    time.sleep(0.5)
    lines[1].start()
    for line in lines:
        line.write(60)
    _finish(plant_db, lines)


def test_server_restart_mid_forwarding(own_pg, tmp_path: Path) -> None:
    url = own_pg.url
    _init(url)
    lines = [Line(tmp_path / f"l{i}", f"line-{i}", url, seed=10 + i) for i in (1, 2, 3)]
    for line in lines:
        line.write(60)
        line.start()
    for _ in range(4):
        for line in lines:
            line.write(50)
        time.sleep(0.3)
    own_pg.restart()  # every line's connection breaks in the middle of its batches
    for _ in range(4):
        for line in lines:
            line.write(50)
        time.sleep(0.3)
    _finish(url, lines)


def test_central_database_down_for_30_s_while_rows_arrive(own_pg, tmp_path: Path) -> None:
    url = own_pg.url
    _init(url)
    lines = [Line(tmp_path / f"l{i}", f"line-{i}", url, seed=20 + i) for i in (1, 2, 3)]
    for line in lines:
        line.write(40)
        line.start()
    _settle(lines)
    own_pg.stop()
    down_at = time.monotonic()
    while time.monotonic() - down_at < 30:  # rows arrive all the while: 2 rows/s a line
        for line in lines:
            line.write(1)
        time.sleep(0.5)
    for line in lines:  # the lines kept monitoring: each read what arrived, and it waits
        wait_until(line.read_all, 30, f"{line.name} read its log while the link was down")
        assert line.waiting() > 0
        assert '"state":"down"' in line.output()
    own_pg.start()
    _finish(url, lines)
    for line in lines:
        assert '"state":"up"' in line.output().split('"state":"down"')[-1]
