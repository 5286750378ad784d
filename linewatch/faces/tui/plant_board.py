"""The plant board: one row per line, from the central database.

The source's listener thread only calls `_changed`, which posts one `PlantChanged`; the
handler starts a worker that reads the records (at most REFRESH_HZ a second, never two at
once) and posts `PlantArrived`; its handler redraws the table. A line that stops talking
cannot notify, so the records are also read every LINK_CHECK seconds to see links go down.
"""

from __future__ import annotations

import time
from typing import Any, ClassVar

from rich.text import Text
from textual import on, work
from textual.app import App, ComposeResult
from textual.binding import Binding, BindingType
from textual.message import Message
from textual.widgets import DataTable, Footer, Static

from linewatch.domain.durations import format_age
from linewatch.domain.safe_text import visible
from linewatch.present.plant_view import PlantSource

REFRESH_HZ = 10.0
LINK_CHECK = 5.0
STYLES = {"link down": "bold red", "alarm": "bold red", "watch": "yellow", "ok": "green"}
COLUMNS = ("state", "line", "waiting", "most urgent", "flood", "stale", "link", "newest")


class PlantChanged(Message):
    """The central database says a line's rows changed."""


class PlantArrived(Message):
    def __init__(self, lines: list[dict[str, Any]]) -> None:
        super().__init__()
        self.lines = lines


class PlantUnread(Message):
    def __init__(self, problem: str) -> None:
        super().__init__()
        self.problem = problem


def cells(r: dict[str, Any]) -> list[Text]:
    """The row of one line record; every text from outside as plain, visible text."""
    waiting = " ".join(f"P{p}×{n}" for p, n in r["waiting"].items()) or "-"
    top = r["most_urgent"]
    what = f"{top['characteristic']} {top['kind']} {top['rule']}" if top else "-"
    link = r["link"] + (f" {r['entries_waiting']} waiting" if r["entries_waiting"] else "")
    age = "-" if r["newest_data_age"] is None else format_age(r["newest_data_age"])
    flood = str(r["flood"].get("count", "yes")) if r["flood"] else "-"
    return [Text(f"{r['glyph']} {r['state']}", style=STYLES.get(r["state"], "")),
            *(Text(visible(str(v))) for v in (r["line"], waiting, what, flood,
                                               r["stale_feeds"] or "-", link, age))]


class PlantBoardApp(App[int]):
    ENABLE_COMMAND_PALETTE = False
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "open_line", "Line board"),
        Binding("q", "quit", "Quit"),
    ]

    def __init__(self, source: PlantSource) -> None:
        super().__init__()
        self.source = source
        self.title = "linewatch · plant"
        self.records: list[dict[str, Any]] = []
        self._woken = False
        self._reading = False
        self._again = False
        self._last_read = -1.0
        self._timer_set = False
        self.redraws = 0

    def compose(self) -> ComposeResult:
        yield Static(Text("linewatch · plant"), id="plant-top")
        table: DataTable[Text] = DataTable(cursor_type="row", zebra_stripes=True)
        table.add_columns(*COLUMNS)
        yield table
        yield Footer()

    def on_mount(self) -> None:
        self.source.subscribe(self._changed)
        self.set_interval(LINK_CHECK, self._changed)
        self._changed()

    def _changed(self) -> None:
        """From any thread: wake the loop once."""
        if not self._woken:
            self._woken = True
            self.post_message(PlantChanged())

    @on(PlantChanged)
    def _schedule(self) -> None:
        self._woken = False
        if self._reading:
            self._again = True
            return
        due = self._last_read + 1.0 / REFRESH_HZ - time.perf_counter()
        if due > 0:
            if not self._timer_set:  # one pending wake-up, however many notifications
                self._timer_set = True
                self.set_timer(due, self._timer_due)
            return
        self._reading = True
        self._last_read = time.perf_counter()
        self._read()

    def _timer_due(self) -> None:
        self._timer_set = False
        self._changed()

    @work(thread=True, exclusive=True, group="plant")
    def _read(self) -> None:
        from linewatch.domain.errors import LinewatchError

        try:
            self.post_message(PlantArrived(self.source.lines()))
        except (LinewatchError, OSError) as exc:
            self.post_message(PlantUnread(visible(str(exc))))

    def _done_reading(self) -> None:
        self._reading = False
        if self._again:
            self._again = False
            self._changed()

    @on(PlantUnread)
    def _unread(self, message: PlantUnread) -> None:
        self._done_reading()
        self.query_one("#plant-top", Static).update(
            Text(f"linewatch · plant | cannot read the central database: {message.problem}"))

    @on(PlantArrived)
    def _arrived(self, message: PlantArrived) -> None:
        self._done_reading()
        self.records = message.lines
        table = self.query_one(DataTable)
        keep = table.cursor_row
        table.clear()
        for r in self.records:
            table.add_row(*cells(r), key=str(r["line"]))
        if self.records:
            table.move_cursor(row=min(keep, len(self.records) - 1))
        calling = sum(1 for r in self.records if r["state"] in ("alarm", "link down"))
        self.query_one("#plant-top", Static).update(
            Text(f"linewatch · plant | {len(self.records)} lines, {calling} need someone"))
        self.redraws += 1

    @on(DataTable.RowSelected)
    def _row_chosen(self, message: DataTable.RowSelected) -> None:
        self.action_open_line(message.cursor_row)

    def action_open_line(self, row: int | None = None) -> None:
        if not self.records:
            return
        row = self.query_one(DataTable).cursor_row if row is None else row
        line = self.records[min(row, len(self.records) - 1)]["line"]
        self.notify(visible(f"{line}: a line's board from the central database is not in "
                            "this version yet; open it on the line PC"), markup=False)
