"""Feed pulse: every followed file, its pace, rejected rows with the last reasons, rotations,
staleness."""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.widgets import DataTable, Static

from linewatch.domain.durations import format_age
from linewatch.domain.safe_text import visible
from linewatch.domain.words import count
from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import base_name
from linewatch.faces.tui.screens.base import TableScreen
from linewatch.faces.tui.widgets.key_footer import KeyFooter
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.present import view


def short_path(path: str, width: int) -> str:
    """Keep the end of a long path, where the file name is."""
    return path if len(path) <= width else "..." + path[-(width - 3):]


def shown_names(paths: list[str], width: int) -> dict[str, str]:
    """What the file column shows: the base name (the full path is in the line below the
    table), or the end of the path for files that share a base name."""
    names = [base_name(p) for p in paths]
    return {p: short_path(name if names.count(name) == 1 else p, width)
            for p, name in zip(paths, names, strict=True)}


class FeedScreen(TableScreen):
    """A row per file; the highlighted file's last rejected rows below."""

    TABLE_ID = "feed-table"

    def __init__(self) -> None:
        super().__init__()
        self._columns_for = 0
        self._file_width = 16
        self._ages: dict[str, str] = {}

    def compose(self) -> ComposeResult:
        yield TopBar(id="topbar")
        yield DataTable(id="feed-table", cursor_type="row")
        yield Static(id="feed-rejects")
        yield KeyFooter()

    def _add_columns(self, width: int) -> None:
        self._columns_for = width
        self._file_width = max(16, width - 56)
        t = self.table
        t.clear(columns=True)
        t.add_column("status", key="status", width=11)
        t.add_column("file", key="file", width=self._file_width)
        t.add_column("rows", key="rows", width=7)
        t.add_column("rows/s", key="rate", width=6)
        t.add_column("rej.", key="rejected", width=5)
        t.add_column("rot/tr", key="rot", width=6)
        t.add_column("age", key="age", width=4)

    def show_line(self) -> None:
        line = self.lw.line
        keep = self.table.cursor_row
        self.table.clear()
        self._ages.clear()
        names = shown_names([f.file for f in line.feeds], self._file_width)
        for f in line.feeds:
            self.table.add_row(*self._cells(f, names[f.file]), key=f.file)
        if 0 <= keep < len(line.feeds):
            self.table.move_cursor(row=keep)
        self._go_to_wanted_file()
        stale = sum(1 for f in line.feeds if f.stale)
        rejected = sum(f.rejected for f in line.feeds)
        self.query_one(TopBar).show(line, "feed pulse",
                                    f"{count(len(line.feeds), 'file')}, {stale} stale, "
                                    f"{rejected} rejected")
        self._show_rejects()
        super().show_line()

    def on_screen_resume(self) -> None:
        super().on_screen_resume()
        if self.drawable:
            self._go_to_wanted_file()

    def _go_to_wanted_file(self) -> None:
        """Highlight the file another view asked for (a feed alarm's 'close-up'), once."""
        wanted, self.lw.wanted_feed = self.lw.wanted_feed, None
        files = [f.file for f in self.lw.line.feeds]
        if wanted in files:
            self.table.move_cursor(row=files.index(wanted))
            self._show_rejects()

    def tick_clock(self) -> None:
        """Ages move on with the clock; touch a cell only when its text changes."""
        for f in self.lw.line.feeds:
            age = format_age(self.lw.age_now(f.last_row_age))
            if self._ages.get(f.file) != age:
                self._ages[f.file] = age
                self.table.update_cell(f.file, "age", age)

    def _cells(self, f: view.FeedView, name: str) -> list[object]:
        g = self.lw.glyphs
        bad = f.stale or f.status in ("missing", "unreadable", "stale", "no header",
                                      "skipped", "bounded")
        state = (view.STATE_STALE if bad else
                 view.STATE_WATCH if f.status == "warning" else view.STATE_OK)
        return [
            Text(f"{g.state[state]} {visible(f.status)}",
                 "reverse" if bad else palette.STATE_STYLE[state]),
            Text(visible(name)),  # a file name: never markup
            f"{f.rows:,}",
            f"{f.rows_per_second:.1f}",
            Text(f"{f.rejected:,}", palette.SIGNAL if f.rejected else ""),
            f"{f.rotations}/{f.truncations}",
            self._ages.setdefault(f.file, format_age(self.lw.age_now(f.last_row_age))),
        ]

    @on(DataTable.RowHighlighted, "#feed-table")
    def _moved(self) -> None:
        self._show_rejects()

    def _show_rejects(self) -> None:
        feeds = self.lw.line.feeds
        row = self.table.cursor_row
        text = Text(end="")
        if self.lw.line.problem:  # the collector itself fails: above any file's details
            text.append("collecting fails: ", f"bold {palette.SIGNAL}")
            text.append(visible(self.lw.line.problem), palette.SIGNAL)
            text.append("\nwhat it read is read again after a pause; nothing is lost\n",
                        palette.LABEL)
        if not feeds:
            text.append("no file followed yet", palette.LABEL)
        elif 0 <= row < len(feeds):
            f = feeds[row]
            text.append(f"{visible(f.file)}\n", "bold")
            if f.unread:
                text.append(f"no header: {f.unread:,} lines not read\n", palette.SIGNAL)
            for note in f.notes:
                text.append(f"warning: {visible(note)}\n", palette.SPEC)
            if f.times_note:
                text.append(f"{visible(f.times_note)}\n", palette.SPEC)
            if f.last_rejects:
                text.append(f"last rejected rows ({f.rejected} in all):\n")
                for reason in f.last_rejects[-5:]:
                    text.append(f"  {visible(reason)}\n", palette.SIGNAL)
            elif not f.unread:
                text.append("no rejected row", palette.LABEL)
        self.query_one("#feed-rejects", Static).update(text)
