"""The line board: one two-line row per characteristic, plus alarm and feed digests when wide."""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.events import Resize
from textual.reactive import reactive
from textual.widgets import DataTable, Input, Static

from linewatch.domain.durations import format_age
from linewatch.domain.safe_text import visible
from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import (
    ALARM_STATE_WORDS,
    STATE_WORDS,
    alarm_counts,
    alarm_subject,
    base_name,
    needs_attention,
)
from linewatch.faces.tui.screens.base import LineScreen
from linewatch.faces.tui.widgets.key_footer import KeyFooter
from linewatch.faces.tui.widgets.margin_gauge import margin_gauge
from linewatch.faces.tui.widgets.spark_cell import SparkCell
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.present import view
from linewatch.present.figures import fmt_reading

WIDE_AT = 120  # columns from which the digests sit beside the board
SIDE_WIDTH = 44
COLUMNS = ("state", "name", "recent", "margin", "age")
HEADERS = {
    "state": "state",
    "name": "characteristic",
    "recent": "recent points",
    "margin": "spec margin",
    "age": "age",
}


def column_widths(total: int) -> dict[str, int]:
    """Share `total` columns among the board's cells (each cell adds 2 of padding)."""
    usable = max(40, total - 2 * len(COLUMNS) - 2)
    fixed = {"state": 9, "name": 16 if usable < 90 else 22, "age": 5}
    rest = usable - sum(fixed.values())
    margin = max(20, min(32, rest * 2 // 5))
    return {**fixed, "margin": margin, "recent": max(8, rest - margin)}


class BoardTable(DataTable[object]):
    """The board's table: Enter opens the close-up, and the footer says so."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("enter", "select_cursor", "Close-up")]


class BoardScreen(LineScreen):
    """Which characteristic needs attention and why, at a glance."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "close_up", "Close-up", show=False,
                tooltip="chart and figures of the highlighted row"),
        Binding("slash", "filter", "Filter", key_display="/",
                tooltip="show only characteristics whose name contains the text"),
        Binding("exclamation_mark", "attention", "Attention", key_display="!",
                tooltip="show only alarm, watch, stale and refused rows (again: show all)"),
        Binding("escape", "clear_filter", "Clear filter", show=False,
                tooltip="clear the name filter and the attention switch"),
    ]

    filter_text: reactive[str] = reactive("", init=False)  # a name must contain it
    attention_only: reactive[bool] = reactive(False, init=False)  # alarm, watch, stale rows

    def __init__(self) -> None:
        super().__init__()
        self._widths = column_widths(80)
        self._row_sigs: dict[str, tuple[object, ...]] = {}
        self._shown: list[str] = []
        self._by_name: dict[str, view.CharacteristicView] = {}
        self._side_plain: dict[str, str] = {}
        self._side_lines: dict[str, int] = {}

    def compose(self) -> ComposeResult:
        yield TopBar(id="topbar")
        with Horizontal(id="board-body"):
            yield BoardTable(id="board-table", cursor_type="row")
            with Vertical(id="board-side"):
                yield Static(id="side-alarms")
                yield Static(id="side-feeds")
        yield Input(placeholder="characteristic name contains...", id="board-filter")
        yield KeyFooter()

    @property
    def table(self) -> DataTable[object]:
        return self.query_one("#board-table", DataTable)

    def on_mount(self) -> None:
        self.watch(self.table, "scroll_y", self._redraw_rows_in_view, init=False)
        self.query_one("#board-filter", Input).display = False
        self._rebuild_columns(self.size.width or 80)
        self.ready = True
        self.show_line()

    def on_resize(self, event: Resize) -> None:
        wide = event.size.width >= WIDE_AT
        self.set_class(wide, "-wide")
        width = event.size.width - (SIDE_WIDTH if wide else 0)
        if column_widths(width) != self._widths:
            self._rebuild_columns(width)
            self.show_line()

    def _rebuild_columns(self, width: int) -> None:
        self._widths = column_widths(width)
        table = self.table
        table.clear(columns=True)
        for key in COLUMNS:
            table.add_column(HEADERS[key], key=key, width=self._widths[key])
        self._row_sigs.clear()
        self._shown = []

    def passing_filter(self) -> list[view.CharacteristicView]:
        """The characteristics the filter lets through, in the line's order."""
        needle = self.filter_text.lower()
        return [
            cv for cv in self.lw.line.characteristics
            if needle in cv.name.lower() and (not self.attention_only or needs_attention(cv.state))
        ]

    def show_line(self) -> None:
        line = self.lw.line
        shown = self.passing_filter()
        names = [cv.name for cv in shown]
        self._by_name = {cv.name: cv for cv in shown}
        table = self.table
        if names != self._shown:
            keep = self._highlighted_name()
            table.clear()
            self._row_sigs.clear()
            for cv in shown:
                table.add_row(*self._cells(cv), height=2, key=cv.name)
                self._row_sigs[cv.name] = self._signature(cv)
            self._shown = names
            if keep in names:
                table.move_cursor(row=names.index(keep))
        else:
            self._redraw_rows_in_view()
        extra = []
        if self.filter_text:
            extra.append(f"filter '{self.filter_text}'")
        if self.attention_only:
            extra.append("attention only")
        hidden = len(line.characteristics) - len(shown)
        if hidden:
            extra.append(f"{hidden} hidden")
        self.query_one(TopBar).show(line, "board", ", ".join(extra))
        if self.has_class("-wide"):
            self._draw_side(line)
        super().show_line()

    def tick_clock(self) -> None:
        self._redraw_rows_in_view()

    def _rows_in_view(self) -> list[str]:
        """Names of the rows on screen (two lines each, below one header line)."""
        table = self.table
        first = max(0, int(table.scroll_y) // 2 - 1)
        count = table.size.height // 2 + 3
        return self._shown[first : first + count]

    def _redraw_rows_in_view(self) -> None:
        """Refresh the cells of rows on screen whose content changed. Rows out of view wait
        until they scroll in: with hundreds of characteristics, redrawing only what shows keeps
        a keypress quick."""
        if not self.drawable:
            return
        for name in self._rows_in_view():
            cv = self._by_name.get(name)
            if cv is None:
                continue
            sig = self._signature(cv)
            before = self._row_sigs.get(name)
            if before == sig:
                continue
            if before is not None and before[:-1] == sig[:-1]:  # only the age moved on
                self.table.update_cell(name, "age", self._age_cell(cv))
            else:
                for key, cell in zip(COLUMNS, self._cells(cv), strict=True):
                    self.table.update_cell(name, key, cell)
            self._row_sigs[name] = sig

    def _signature(self, cv: view.CharacteristicView) -> tuple[object, ...]:
        """What a row's cells show; the age text last, so a row whose age alone moved on
        redraws only that cell."""
        loc = cv.location
        width = self._widths["recent"]
        tail = (len(loc.values), loc.values[-1:], loc.marks[-width:]) if loc else ()
        return (cv.state, cv.last_value, cv.decimals, cv.points, cv.open_alarms, cv.cpk,
                cv.cpk_lower95,
                cv.margin_sigma, cv.recent_mean, cv.stale, cv.stuck, cv.baseline_needed,
                cv.limits_refused,
                cv.pending_phase_start, tail, cv.attribute,
                format_age(self.lw.age_now(cv.last_row_age)))

    def _highlighted_name(self) -> str | None:
        if not self._shown or self.table.row_count == 0:
            return None
        row = self.table.cursor_row
        return self._shown[row] if 0 <= row < len(self._shown) else None

    def _cells(self, cv: view.CharacteristicView) -> list[object]:
        g = self.lw.glyphs
        state = Text(f"{g.state.get(cv.state, '?')} {STATE_WORDS.get(cv.state, cv.state)}",
                     palette.STATE_STYLE.get(cv.state, ""), end="")
        state.append("\n")
        if cv.open_alarms:
            state.append(f"{cv.open_alarms} open", "bold")
        elif cv.limits_refused:  # more points cannot help: not "learning"
            state.append("no limits", palette.STATE_STYLE[view.STATE_REFUSED])
        elif cv.pending_phase_start is not None:  # limits are being learned again
            state.append("learning", palette.STATE_STYLE[view.STATE_LEARNING])
        name = Text(visible(cv.name), "bold", end="", no_wrap=True, overflow="ellipsis")
        name.append("\n")
        value = fmt_reading(cv.last_value, cv.decimals)
        name.append(f"{value} {visible(cv.unit)}".rstrip())
        if cv.subgroup_size > 1:
            name.append(f" n={cv.subgroup_size}", palette.LABEL)
        loc = cv.location
        spark = SparkCell(loc.values if loc else [], loc.marks if loc else [],
                          self._widths["recent"], g).to_text()
        gauge: Text
        if cv.limits_refused:  # why, in the gauge's place (the close-up says what to do)
            gauge = Text(f"limits refused: {visible(cv.limits_refused)}",
                         palette.STATE_STYLE[view.STATE_REFUSED], end="")
        elif cv.state == view.STATE_LEARNING or (cv.cpk is None and cv.baseline_needed):
            gauge = Text(f"learning limits\n{cv.baseline_needed} more points",
                               palette.STATE_STYLE[view.STATE_LEARNING], end="")
        else:
            gauge = margin_gauge(cv, self._widths["margin"], g, wide=self._widths["margin"] >= 26)
        return [state, name, spark, gauge, self._age_cell(cv)]

    def _age_cell(self, cv: view.CharacteristicView) -> Text:
        text = Text(format_age(self.lw.age_now(cv.last_row_age)), end="")
        if cv.stuck:
            text.append("\nstuck", "reverse")
        elif cv.stale:
            text.append("\nstale", "reverse")
        return text

    def _draw_side(self, line: view.LineSnapshot) -> None:
        g = self.lw.glyphs
        alarms = Text(end="")
        alarms.append("open alarms\n", "bold underline")
        open_ = [a for a in self.lw.alarms_in_order() if a.state != view.NORMAL]
        for a in open_[:12]:
            alarms.append(f"P{a.priority} ", "bold" if a.priority <= 2 else "")
            alarms.append(f"{ALARM_STATE_WORDS.get(a.state, a.state):<9} ",
                          "reverse" if a.state == view.UNACKNOWLEDGED else "")
            alarms.append(f"{visible(alarm_subject(a))} {visible(alarm_counts(a))}\n")
        if not open_:
            alarms.append("none\n", palette.LABEL)
        elif len(open_) > 12:
            alarms.append(f"... {len(open_) - 12} more (a)\n", palette.LABEL)
        self._update_side("#side-alarms", alarms)
        feeds = Text(end="")
        feeds.append("feeds\n", "bold underline")
        for f in line.feeds:
            mark = g.state[view.STATE_STALE] if f.stale else g.state[view.STATE_OK]
            feeds.append(f"{mark} {f.status:<9} ", "reverse" if f.stale else "")
            feeds.append(f"{visible(base_name(f.file))} {f.rows_per_second:.1f}/s")
            if f.rejected:
                feeds.append(f" {f.rejected} rejected", palette.SIGNAL)
            feeds.append("\n")
        self._update_side("#side-feeds", feeds)

    def _update_side(self, selector: str, text: Text) -> None:
        """Update a digest; lay the screen out again only when its height changes."""
        lines = text.plain.count("\n")
        if self._side_plain.get(selector) == text.plain:
            return
        same_height = self._side_lines.get(selector) == lines
        self._side_plain[selector] = text.plain
        self._side_lines[selector] = lines
        self.query_one(selector, Static).update(text, layout=not same_height)

    def action_close_up(self) -> None:
        name = self._highlighted_name()
        if name is not None:
            from linewatch.faces.tui.screens.close_up import CloseUpScreen

            self.app.push_screen(CloseUpScreen(name))

    @on(DataTable.RowSelected, "#board-table")
    def _row_chosen(self, event: DataTable.RowSelected) -> None:
        event.stop()
        self.action_close_up()

    def action_filter(self) -> None:
        box = self.query_one("#board-filter", Input)
        box.display = True
        box.value = self.filter_text
        box.focus()

    def watch_filter_text(self) -> None:
        self.redraw()

    def watch_attention_only(self) -> None:
        self.redraw()

    @on(Input.Changed, "#board-filter")
    def _filter_typed(self, event: Input.Changed) -> None:
        self.filter_text = event.value.strip()

    @on(Input.Submitted, "#board-filter")
    def _filter_done(self, event: Input.Submitted) -> None:
        box = self.query_one("#board-filter", Input)
        box.display = False
        self.table.focus()

    def action_attention(self) -> None:
        self.attention_only = not self.attention_only

    def action_clear_filter(self) -> None:
        box = self.query_one("#board-filter", Input)
        box.display = False
        self.filter_text = ""
        self.attention_only = False
        self.table.focus()
