"""What every line-showing screen shares: a typed handle on the app and redraw on resume."""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, cast

from textual.events import Resize
from textual.screen import Screen
from textual.widgets import DataTable

from linewatch.faces.tui.messages import ActionRequest

if TYPE_CHECKING:
    from linewatch.faces.tui.app import LinewatchApp


class LineScreen(Screen[None]):
    """A screen that draws from `app.line`; redraws only when the snapshot version moved."""

    drawn_version: int = -1
    ready: bool = False  # set by on_mount once the widgets (and table columns) exist

    @property
    def lw(self) -> LinewatchApp:
        """The app, typed."""
        return cast("LinewatchApp", self.app)

    @property
    def drawable(self) -> bool:
        """Mounted with its widgets and not being taken down: the clock and the snapshot timer
        can fire while the app shuts down, after a screen's widgets are already removed."""
        # `display` turns False while a node is closing or being pruned (screens are never
        # hidden by style), so it tells teardown apart without reaching into private state.
        return self.ready and self.app.is_running and self.is_running and self.display

    def on_screen_resume(self) -> None:
        if self.drawn_version != self.lw.line.version:
            self.redraw()

    def redraw(self) -> None:
        """Draw the current line if the screen is mounted (a new picture can arrive between a
        screen's creation and its mount)."""
        if self.drawable:
            self.show_line()

    def show_line(self) -> None:
        """Draw `app.line`. Subclasses draw, then call this to record the version."""
        self.drawn_version = self.lw.line.version

    def ask(self, call: str, *args: object, done: Callable[[object], str] | None = None,
            then: Callable[[object], None] | None = None) -> None:
        """Ask the monitor for one of its actions, in a worker thread (the app's `request`).
        When it went through, `done(result)` is told on screen and `then(result)` runs; a
        refusal (a one-line LinewatchError) or a busy store is told instead."""
        self.lw.request(ActionRequest(call, args, done, then))

    def tick_clock(self) -> None:
        """Once a second: refresh what only time changes (ages). Default: nothing."""


class TableScreen(LineScreen):
    """A line screen built around one DataTable whose columns depend on the terminal width."""

    TABLE_ID = ""  # the DataTable's id, set by each subclass
    _columns_for = 0  # the width the columns were laid out for

    @property
    def table(self) -> DataTable[object]:
        return self.query_one(f"#{self.TABLE_ID}", DataTable)

    def on_mount(self) -> None:
        self._add_columns(self.app.size.width)
        self.ready = True
        self.show_line()

    def on_resize(self, event: Resize) -> None:
        if event.size.width != self._columns_for:
            self._add_columns(event.size.width)
            self.show_line()

    def _add_columns(self, width: int) -> None:
        """Lay the table's columns out for `width` (and remember it in `_columns_for`)."""
        raise NotImplementedError
