"""What every line-showing screen shares: a typed handle on the app and redraw on resume."""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, cast

from textual.events import Resize
from textual.screen import Screen
from textual.widgets import DataTable

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

    def ask(self, call: str, *args: Any) -> tuple[bool, Any]:
        """Call one of the monitor's actions. A refusal (a one-line LinewatchError) or any other
        failure becomes a message on screen; the screen keeps running either way."""
        from linewatch.domain.errors import LinewatchError

        try:
            return True, getattr(self.lw.actions, call)(*args)
        except LinewatchError as exc:
            self.notify(str(exc), title="not done", severity="error")
        except Exception as exc:  # the store may be busy or gone; never take the screen down
            self.notify(f"{type(exc).__name__}: {exc}", title="not done", severity="error")
        return False, None

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
