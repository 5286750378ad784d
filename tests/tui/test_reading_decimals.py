"""The board and the close-up write a characteristic's readings with its decimals (the same
ones the report uses: figures.reading_decimals)."""

from __future__ import annotations

import io

from rich.console import Console
from textual.widgets import DataTable, Static

from linewatch.faces.tui.app import LinewatchApp

from .fake_line import FakeSource


async def test_board_and_close_up_show_the_characteristics_decimals(
        app: LinewatchApp, source: FakeSource) -> None:
    od = source.picture.characteristics[0]
    od.decimals = 3
    assert od.last_value is not None and od.location is not None
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.pause()
        table = app.screen.query_one("#board-table", DataTable)
        name_cell = str(table.get_cell_at((0, 1)))
        assert f"{od.last_value:.3f} mm" in name_cell
        await pilot.press("enter")
        await pilot.pause()
        cursor = str(app.screen.query_one("#closeup-cursor", Static).render())
        assert f"= {od.location.values[-1]:.3f}" in cursor
        console = Console(width=120, file=io.StringIO(), color_system=None)
        console.print(app.screen.query_one("#closeup-box", Static).content)
        box = console.file.getvalue()  # type: ignore[attr-defined]
        assert f"LSL {od.lsl:.3f}" in box and f"USL {od.usl:.3f}" in box
