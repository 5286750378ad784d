"""A characteristic whose Phase I limits were refused (every baseline value alike, so the
moving-range estimate of sigma is 0 — arithmetic, MR-bar / d2 with MR-bar = 0) says so with
the reason on the board and in the close-up, instead of "learning" as if more points would
help: its baseline is those points whatever follows."""

from __future__ import annotations

import threading
from pathlib import Path

import pytest
from textual.widgets import DataTable, Static

from linewatch.config.loading import parse_config
from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.pipeline.monitor import Monitor
from linewatch.pipeline.plan import WatchPlan
from linewatch.present import view
from linewatch.present.face import MonitorFace
from tests.integration.watch.helpers import wait_until

ROWS = 60


def _collect(tmp_path: Path) -> MonitorFace:
    """A real collector over a log with a constant column beside a varying one."""
    log = tmp_path / "line.csv"
    log.write_text("time,od,gap\n" + "".join(
        f"2026-03-02T06:{k // 60:02d}:{k % 60:02d},{12 + (k * 7 % 11) / 1000:.3f},5.000\n"
        for k in range(ROWS)))
    config = parse_config(f'[monitor]\nstuck_repeats = 100000\n[[feed]]\npaths = ["{log}"]\n')
    plan = WatchPlan(config=config, feeds=config.feeds, characteristics=[], columns=None,
                     baseline=25)
    monitor = Monitor(plan, tmp_path / "state")
    face = MonitorFace(monitor)
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), daemon=True)
    worker.start()

    def refused() -> bool:
        gap = next((c for c in face.snapshot().characteristics if c.name == "gap"), None)
        return gap is not None and gap.points == ROWS and bool(gap.limits_refused)

    try:
        wait_until(refused)
    finally:
        stop.set()
        worker.join(timeout=20)
    return face


def test_refused_limits_are_a_state_of_their_own_with_the_reason(tmp_path: Path) -> None:
    face = _collect(tmp_path)
    try:
        by_name = {c.name: c for c in face.snapshot().characteristics}
    finally:
        face.close()
    gap, od = by_name["gap"], by_name["od"]
    assert gap.state == view.STATE_REFUSED != view.STATE_LEARNING
    assert "sigma estimated as 0" in gap.limits_refused
    assert gap.baseline_needed == 0  # more points are not what it needs
    assert od.state != view.STATE_REFUSED and not od.limits_refused  # the other is charted


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
async def test_board_and_close_up_show_the_refusal_not_learning(
        tmp_path: Path, size: tuple[int, int]) -> None:
    face = _collect(tmp_path)
    app = LinewatchApp(face, face, bell=False, title="refused")
    try:
        async with app.run_test(size=size) as pilot:
            await pilot.pause()
            table = app.screen.query_one(DataTable)
            row = next(r for r in range(table.row_count)
                       if "gap" in str(table.get_row_at(r)[1]))
            state, _name, _spark, gauge, _age = (str(c) for c in table.get_row_at(row))
            table.move_cursor(row=row)
            await pilot.press("enter")
            await pilot.pause()
            header = app.screen.query_one(TopBar).render()
            cursor = str(app.screen.query_one("#closeup-cursor", Static).render())
    finally:
        face.close()
    assert "refused" in state and "learn" not in state
    assert gauge.startswith("limits refused: sigma estimated as 0")
    assert "learning" not in gauge
    assert "limits refused" in str(header) and "sigma estimated as 0" in str(header)
    assert "limits refused: sigma estimated as 0" in cursor
    assert "new baseline" in cursor and "learning" not in cursor
