"""The alarm queue: open alarms, highest priority and newest first, acted on by keypress."""

from __future__ import annotations

from typing import ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.widgets import DataTable, Static

from linewatch.domain.alarm_states import AlarmKind, by_urgency
from linewatch.domain.clock import day_and_time, time_of_day
from linewatch.domain.safe_text import visible, visible_lines
from linewatch.faces.tui import palette
from linewatch.faces.tui.formatting import ALARM_STATE_WORDS, alarm_counts, alarm_subject
from linewatch.faces.tui.screens.base import TableScreen
from linewatch.faces.tui.widgets.key_footer import KeyFooter
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.present import view

KIND_WORDS: dict[str, str] = {
    AlarmKind.OUT_OF_SPEC: "OUT OF SPEC",
    AlarmKind.BEYOND_LIMITS: "beyond limits",
    AlarmKind.RUN_RULE: "run rule",
    AlarmKind.FEED_HEALTH: "feed",
}


def sorted_alarms(alarms: list[view.AlarmView]) -> list[view.AlarmView]:
    """Open before shelved before closed, then priority 1 first, then newest first (the higher
    id first on the same second): the domain's one urgency order, in its fast form."""
    return by_urgency(alarms)


WINDOW_PAGES = 3  # rows built at once: this many screenfuls (at least MIN_WINDOW rows)
MIN_WINDOW = 30


class QueueTable(DataTable[object]):
    """The queue's table: Enter acknowledges, and the footer says so. It holds a window of the
    queue; a cursor key that would leave the window first moves the window (see `_reach`)."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("enter", "select_cursor", "Acknowledge")]

    def _reach(self, step: int) -> None:
        screen = self.screen
        if isinstance(screen, AlarmQueueScreen):
            screen.reach(step)

    def action_cursor_down(self) -> None:
        self._reach(1)
        super().action_cursor_down()

    def action_cursor_up(self) -> None:
        self._reach(-1)
        super().action_cursor_up()

    def action_page_down(self) -> None:
        self._reach(self.page_rows())
        super().action_page_down()

    def action_page_up(self) -> None:
        self._reach(-self.page_rows())
        super().action_page_up()

    def action_scroll_top(self) -> None:
        self._reach(-(1 << 62))
        super().action_scroll_top()

    def action_scroll_bottom(self) -> None:
        self._reach(1 << 62)
        super().action_scroll_bottom()

    def page_rows(self) -> int:
        """Rows one screenful of the table shows (a guess from the terminal before layout)."""
        height = self.scrollable_content_region.height - (
            self.header_height if self.show_header else 0)
        return height if height > 0 else max(1, self.app.size.height - 4)


class AlarmQueueScreen(TableScreen):
    """Acknowledge, shelve and read the reaction plan of the highlighted alarm."""

    TABLE_ID = "queue-table"

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("enter", "acknowledge", "Acknowledge", show=False, tooltip="acknowledge the "
                "highlighted alarm: a digit picks the reason, a note is optional, Enter confirms"),
        Binding("k", "acknowledge", "Acknowledge", show=False,
                tooltip="same as Enter: acknowledge the highlighted alarm"),
        Binding("K", "acknowledge_all", "Ack all",
                tooltip="acknowledge every open alarm of the highlighted alarm's characteristic"),
        Binding("s", "shelve", "Shelve", tooltip="shelve the highlighted alarm for a while"),
        Binding("u", "unshelve", "Unshelve", tooltip="bring a shelved alarm back"),
        Binding("c", "close_up", "Close-up", tooltip="close-up of the alarm's characteristic"),
    ]

    def __init__(self) -> None:
        super().__init__()
        self._ids: list[int] = []  # the alarms of the rows built, in order
        self._alarms: list[view.AlarmView] = []  # the whole queue, in order
        self._alarms_of: view.LineSnapshot | None = None  # the picture `_alarms` come from
        self._start = 0  # the queue position of the first row built
        self._columns_for = 0

    def compose(self) -> ComposeResult:
        yield TopBar(id="topbar")
        yield QueueTable(id="queue-table", cursor_type="row")
        yield Static(id="queue-plan")
        yield KeyFooter()

    @property
    def queue_table(self) -> QueueTable:
        return self.query_one(f"#{self.TABLE_ID}", QueueTable)

    def _add_columns(self, width: int) -> None:
        """Fixed columns, and what happened gets the rest, so state is never cut off."""
        self._columns_for = width
        char_width = 14 if width < 100 else 22
        table = self.table
        table.clear(columns=True)
        table.add_column("P", key="prio", width=1)
        table.add_column("raised", key="time", width=8)
        table.add_column("characteristic", key="char", width=char_width)
        fixed = 1 + 8 + char_width + 9 + 2 * 5 + 2  # the other columns, padding, scrollbar
        table.add_column("what happened", key="what", width=max(12, width - fixed))
        table.add_column("state", key="state", width=9)

    def show_line(self) -> None:
        keep = self.highlighted()
        alarms = self.lw.alarms_in_order()
        self._alarms, self._alarms_of = alarms, self.lw.line
        size = self._window_size()
        where = None if keep is None else next(
            (i for i, a in enumerate(alarms) if a.id == keep.id), None)
        start = self._start
        if where is not None and not start <= where < start + size:
            start = where - self.queue_table.page_rows()
        self._fill(start, where)
        self._show_plan()
        super().show_line()

    def _window_size(self) -> int:
        """How many rows to build: a few screenfuls, so opening and redrawing stay quick
        however long the queue is."""
        return max(MIN_WINDOW, WINDOW_PAGES * self.queue_table.page_rows())

    def _fill(self, start: int, cursor_at: int | None, screen_row: int | None = None) -> None:
        """Build the rows of the queue from position `start` (clamped), put the cursor on
        queue position `cursor_at` when it is among them, `screen_row` lines below the top."""
        alarms, size, table = self._alarms, self._window_size(), self.table
        start = max(0, min(start, len(alarms) - size))
        shown = alarms[start:start + size]
        table.clear()
        for a in shown:
            table.add_row(*self._cells(a), key=str(a.id))
        self._start = start
        self._ids = [a.id for a in shown]
        if cursor_at is not None and start <= cursor_at < start + len(shown):
            row = cursor_at - start
            table.move_cursor(row=row, scroll=screen_row is None)
            if screen_row is not None:
                table.scroll_to(y=row - screen_row, animate=False, force=True, immediate=True)
        count = f"{len(alarms)} alarms"
        if len(shown) < len(alarms):
            count += f", {start + 1}-{start + len(shown)} loaded"
        self.query_one(TopBar).show(self.lw.line, "alarm queue", count)

    def reach(self, step: int) -> None:
        """Before the cursor moves `step` rows (PgDn: a page, End: all the way), move the
        window of built rows so the target is among them, with a page to spare, keeping the
        cursor's alarm on the same screen line."""
        table, alarms = self.table, self._alarms
        if len(self._ids) >= len(alarms) or not self._ids:
            return
        row = table.cursor_row
        here = self._start + row
        target = max(0, min(here + step, len(alarms) - 1))
        if self._start <= target < self._start + len(self._ids):
            return
        size, page = self._window_size(), self.queue_table.page_rows()
        wanted = here - page if step > 0 else here - (size - page - 1)
        start = min(max(wanted, target - size + 1), target)
        self._fill(start, here, screen_row=row - round(table.scroll_y))

    def _cells(self, a: view.AlarmView) -> list[object]:
        loud = "bold" if a.priority <= 2 else ""
        what = Text(no_wrap=True, overflow="ellipsis", end="")
        if a.kind in (AlarmKind.OUT_OF_SPEC, AlarmKind.FEED_HEALTH):
            what.append(f"{KIND_WORDS[a.kind]}: ", loud)
        what.append(visible(alarm_counts(a)))  # the chart comes first: seen at 80 columns
        state_style = {view.UNACKNOWLEDGED: "bold reverse",
                       view.RETURNED_UNACKNOWLEDGED: "bold"}.get(a.state, "")
        return [
            Text(str(a.priority), loud),
            time_of_day(a.raised_at),
            Text(visible(alarm_subject(a)), no_wrap=True, overflow="ellipsis"),
            what,
            Text(ALARM_STATE_WORDS.get(a.state, a.state), state_style),
        ]

    def highlighted(self) -> view.AlarmView | None:
        """The alarm under the cursor, looked up by id in the current snapshot."""
        if not self._ids or self.table.row_count == 0:
            return None
        row = self.table.cursor_row
        if not 0 <= row < len(self._ids):
            return None
        wanted = self._ids[row]
        if self._alarms_of is self.lw.line:  # the rows are of the current picture
            return self._alarms[self._start + row]
        return next((a for a in self.lw.line.alarms if a.id == wanted), None)

    @on(DataTable.RowHighlighted, "#queue-table")
    def _moved(self) -> None:
        self._show_plan()

    @on(DataTable.RowSelected, "#queue-table")
    def _chosen(self, event: DataTable.RowSelected) -> None:
        event.stop()
        self.action_acknowledge()

    def _show_plan(self) -> None:
        a = self.highlighted()
        text = Text(end="")
        if a is None:
            text.append("No alarm. Nothing to do.", palette.LABEL)
        else:
            text.append(f"#{a.id} {visible(a.characteristic)}", "bold")
            where = f" {visible(a.chart)}" if a.chart else ""
            if a.first_index is not None:
                span = (f"point {a.first_index}" if a.first_index == a.last_index
                        else f"points {a.first_index}-{a.last_index}")
                where += f" {span}"
            text.append(f"{where} | raised {day_and_time(a.raised_at)}\n")
            text.append("first: ", palette.LABEL)
            text.append(visible(a.description or a.rule))
            if a.kind in (AlarmKind.RUN_RULE, AlarmKind.BEYOND_LIMITS, AlarmKind.OUT_OF_SPEC):
                text.append(" | signals: ", palette.LABEL)
                text.append(visible(a.counts))
                episodes = "episode" if a.episodes == 1 else "episodes"
                text.append(f" in {a.episodes} {episodes}", palette.LABEL)
            text.append("\n")
            if a.acknowledged_by:
                when = time_of_day(a.acknowledged_at) if a.acknowledged_at else ""
                text.append(f"acknowledged by {visible(a.acknowledged_by)} {when}: "
                            f"{visible(a.reason or '')}")
                if a.note:
                    text.append(f" - {visible(a.note)}")
                text.append("\n")
            if a.state == view.SHELVED and a.shelved_until:
                why = f": {visible(a.reason)}" if a.reason else ""
                text.append(f"shelved until {time_of_day(a.shelved_until)}{why}\n")
            text.append("reaction plan: ", "bold")
            # a plan is written as numbered lines: keep its line breaks, escape the rest
            text.append(visible_lines(a.reaction_plan or "none given in the config"),
                        "" if a.reaction_plan else palette.LABEL)
        self.query_one("#queue-plan", Static).update(text)

    def action_acknowledge(self) -> None:
        from linewatch.faces.tui.screens.ack_panel import AckChoice, AckPanel

        a = self.highlighted()
        if a is None:
            return
        if a.state in (view.ACKNOWLEDGED, view.NORMAL):
            self.notify(f"alarm #{a.id} is already {ALARM_STATE_WORDS.get(a.state, a.state)}")
            return

        def done(choice: AckChoice | None) -> None:
            if choice:
                self.ask("acknowledge", [a.id], choice.reason, choice.note,
                         done=lambda _: f"alarm #{a.id} acknowledged: {choice.reason}")

        self.app.push_screen(
            AckPanel(f"alarm #{a.id} {alarm_subject(a)}: {a.description}", list(a.reasons)), done
        )

    def action_acknowledge_all(self) -> None:
        from linewatch.faces.tui.screens.ack_panel import AckChoice, AckPanel

        a = self.highlighted()
        if a is None:
            return
        name = a.characteristic
        count = sum(
            1 for x in self.lw.line.alarms
            if x.characteristic == name and x.state in (view.UNACKNOWLEDGED,
                                                        view.RETURNED_UNACKNOWLEDGED)
        )

        def done(choice: AckChoice | None) -> None:
            if choice:
                self.ask("acknowledge_characteristic", name, choice.reason, choice.note,
                         done=lambda n: f"{n} alarms of {name} acknowledged: {choice.reason}")

        self.app.push_screen(
            AckPanel(f"all {count} alarm{'' if count == 1 else 's'} of {alarm_subject(a)}",
                     list(a.reasons)),
            done,
        )

    def action_shelve(self) -> None:
        from linewatch.faces.tui.screens.shelve_panel import ShelveChoice, ShelvePanel

        a = self.highlighted()
        if a is None:
            return

        def done(choice: ShelveChoice | None) -> None:
            if choice:
                self.ask("shelve", a.id, choice.seconds, choice.reason,
                         done=lambda _: f"alarm #{a.id} shelved for {choice.text}")

        self.app.push_screen(ShelvePanel(f"alarm #{a.id} {alarm_subject(a)}: {a.description}"),
                             done)

    def action_unshelve(self) -> None:
        a = self.highlighted()
        if a is None:
            return
        if a.state != view.SHELVED:
            self.notify(f"alarm #{a.id} is not shelved")
            return
        self.ask("unshelve", a.id, done=lambda _: f"alarm #{a.id} unshelved")

    def action_close_up(self) -> None:
        a = self.highlighted()
        if a is None:
            return
        if not any(cv.name == a.characteristic for cv in self.lw.line.characteristics):
            # an alarm about a file: its close-up is the feed pulse
            if a.kind == AlarmKind.FEED_HEALTH:
                self.lw.wanted_feed = a.characteristic
                self.lw.action_show("feeds")
                return
            self.notify(f"no characteristic named {a.characteristic}")
            return
        from linewatch.faces.tui.screens.close_up import CloseUpScreen

        self.app.push_screen(CloseUpScreen(a.characteristic, focus_index=a.last_index))
