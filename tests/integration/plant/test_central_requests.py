"""Acknowledgements, shelving and new baselines asked for in the central database are carried
out by the line's collector exactly like the shell's, audited with the central actor's name
and host, and their results flow back; a request for a line that is not running waits."""

from __future__ import annotations

import json
from pathlib import Path

import psycopg

from linewatch.plant.central import migrate
from linewatch.plant.forward import ask
from linewatch.plant.schema import SCHEMA
from tests.integration.plant.plant_lines import Line, central_rows, wait_until


def _request(url: str, request_id: int) -> dict:
    with psycopg.connect(url) as conn:
        row = conn.execute(f"SELECT state, result FROM {SCHEMA}.requests WHERE id = %s",
                           (request_id,)).fetchone()
    assert row is not None
    return {"state": row[0], "result": row[1]}


def _open_alarm(url: str, line: str) -> int:
    for row in central_rows(url, line, "alarms"):  # columns as in the line store's table
        if row[11] == 0 and row[21] is None:  # not acknowledged, not closed
            return int(row[0])
    raise AssertionError("no open alarm forwarded")


def test_requests_wait_for_an_offline_line_then_are_carried_out(plant_db: str,
                                                                tmp_path: Path) -> None:
    with psycopg.connect(plant_db) as conn:
        migrate(conn)
    line = Line(tmp_path / "l1", "line-1", plant_db, seed=7)
    line.write(200)  # a shift after 100 rows: alarms
    line.start()
    wait_until(lambda: line.read_all() and line.waiting() == 0, 60, "forwarded")
    alarm = _open_alarm(plant_db, "line-1")
    line.stop()
    with psycopg.connect(plant_db, autocommit=True) as conn:
        ack = ask(conn, "line-1", "acknowledge", alarm_id=alarm, reason="1",
                  note="seen from the office", actor="qe.miller", host="10.9.8.7")
        bad = ask(conn, "line-1", "shelve", alarm_id=999_999, reason="maintenance",
                  seconds=600, actor="qe.miller", host="10.9.8.7")
        base = ask(conn, "line-1", "new-baseline", characteristic="od", reason="new tool",
                   actor="qe.miller", host="10.9.8.7")
    assert _request(plant_db, ack)["state"] == "pending"  # the line is not running
    line.start()
    for rid in (ack, bad, base):
        wait_until(lambda rid=rid: _request(plant_db, rid)["state"] != "pending", 60,
                   f"request {rid} settled")
    assert _request(plant_db, ack) == {"state": "done",
                                       "result": f"alarm {alarm} acknowledged"}
    failed = _request(plant_db, bad)
    assert failed["state"] == "failed" and "999999" in failed["result"]
    assert _request(plant_db, base)["state"] == "done"
    wait_until(lambda: line.waiting() == 0, 60, "results forwarded")
    line.stop()
    # audited on the line with the central actor and host, and that entry forwarded
    entries = [r for r in central_rows(plant_db, "line-1", "audit")
               if r[3] == "acknowledged" and r[4] == f"alarm {alarm}"]
    assert len(entries) == 1
    assert entries[0][2] == "qe.miller@10.9.8.7"
    assert json.loads(str(entries[0][5]))["note"] == "seen from the office"
    local = [r for r in line.rows("audit") if r[3] == "acknowledged"]
    assert [tuple(r) for r in local] == [tuple(r) for r in entries]
    acked = next(r for r in central_rows(plant_db, "line-1", "alarms") if r[0] == alarm)
    assert acked[11] == 1 and acked[12] == "qe.miller" and acked[13] == "10.9.8.7"
    asked = central_rows(plant_db, "line-1", "baseline_requests")
    assert [(r[1], r[3], r[4]) for r in asked] == [("od", "new tool", "qe.miller@10.9.8.7")]


def test_a_request_is_carried_out_once_across_a_restart(plant_db: str, tmp_path: Path) -> None:
    """The line records each request it carried out in the same transaction, so a collector
    that dies before writing the result back does not act twice when it starts again."""
    from linewatch.alarms.book import AlarmBook
    from linewatch.pipeline.plant_requests import carry_out
    from linewatch.plant.forward import CentralRequest
    from linewatch.store.db import Store

    with Store(tmp_path / "state") as store:
        book = AlarmBook(store)
        events = book.monitoring_failed("test: gauge PC rebooted", 1000.0)
        alarm = events[0].alarm
        assert alarm is not None
        request = CentralRequest(41, "acknowledge", alarm.id, None, "1", "", None, None,
                                 "qe.miller", "10.9.8.7", 1001.0)
        first = carry_out(store, book, request, 1002.0)
        again = carry_out(store, book, request, 1003.0)  # as after a restart
        assert first == again == ("done", f"alarm {alarm.id} acknowledged")
        acks = store.query("SELECT COUNT(*) FROM audit WHERE action = 'acknowledged'")
        assert acks[0][0] == 1
