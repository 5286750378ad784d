"""The close-up of one characteristic: both control charts, box plot, phases, trend, baseline."""

from __future__ import annotations

from typing import ClassVar

from rich.console import Group
from rich.text import Text
from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.events import Resize
from textual.message import Message
from textual.widgets import Static
from textual.worker import Worker, get_current_worker

from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible
from linewatch.domain.words import count
from linewatch.faces.tui import messages, palette
from linewatch.faces.tui.formatting import STATE_WORDS, fmt_span
from linewatch.faces.tui.screens.base import LineScreen
from linewatch.faces.tui.widgets.box_plot import draw_box_plot
from linewatch.faces.tui.widgets.chart_pane import ChartPane
from linewatch.faces.tui.widgets.key_footer import KeyFooter
from linewatch.faces.tui.widgets.phase_table import phase_table
from linewatch.faces.tui.widgets.top_bar import TopBar
from linewatch.present import view
from linewatch.present.figures import fmt_reading

WIDE_AT = (140, 40)  # columns and rows from which the figures sit beside the charts


def point_word(cv: view.CharacteristicView) -> str:
    """What one plotted point of the close-up is: a reading's point, or a subgroup. (Readings
    are single measurements; a chart of subgroups plots one point per subgroup.)"""
    return "subgroup" if cv.subgroup_size > 1 else "point"


def projection_words(slope: float, points: int, lsl: float | None, usl: float | None,
                     seconds_per_point: float | None, decimals: int | None = None,
                     word: str = "point") -> str:
    """Where a significant trend leads: the spec limit it heads for, in plotted points (`word`:
    point or subgroup) and, when the pace of the line is known, in time."""
    name, limit = ("USL", usl) if slope > 0 else ("LSL", lsl)
    if points <= 0:
        return f"the fitted line is already past {name} {fmt_reading(limit, decimals)}"
    when = f"about {count(points, word)}"
    if seconds_per_point:
        when += f", ~{fmt_span(points * seconds_per_point)} at the current pace"
    return f"reaches {name} {fmt_reading(limit, decimals)} in {when} if it goes on"


class CloseUpBody(VerticalScroll):
    """Scrolls with up/down/PgUp/PgDn; left, right, Home and End stay with the point cursor."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("left", "screen.move(-1)", "Point", key_display="<-"),
        Binding("right", "screen.move(1)", "Point", key_display="->", show=False),
        Binding("home", "screen.move_to(0)", "First", show=False),
        Binding("end", "screen.move_to(-1)", "Newest", show=False),
        Binding("pagedown", "page_down", "Figures", key_display="PgDn",
                tooltip="scroll down to the box plot, phases, trend and open alarms"),
    ]

    def check_action(self, action: str, parameters: tuple[object, ...]) -> bool | None:
        """PgDn leads to the figures only when they sit below the charts (not beside them)."""
        return not (action == "page_down" and self.screen.has_class("-wide"))


class CloseUpScreen(LineScreen):
    """Move the cursor over the location chart's points; `n` starts a new phase there."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "back", "Back", tooltip="back to where you came from"),
        Binding("left", "move(-1)", "Point", key_display="<-", show=False,
                tooltip="cursor one point left"),
        Binding("right", "move(1)", "Point", key_display="->", show=False,
                tooltip="cursor one point right"),
        Binding("shift+left", "move(-10)", "10 left", show=False,
                tooltip="cursor ten points left"),
        Binding("shift+right", "move(10)", "10 right", show=False,
                tooltip="cursor ten points right"),
        Binding("home", "move_to(0)", "First", show=False, tooltip="cursor to the first point"),
        Binding("end", "move_to(-1)", "Newest", show=False, tooltip="cursor to the newest point"),
        Binding("n", "new_baseline", "New baseline",
                tooltip="start a new phase of limits at the cursor's point"),
    ]

    def __init__(self, name: str, focus_index: int | None = None) -> None:
        super().__init__()
        self.characteristic = name
        self.focus_index = focus_index
        self.cursor: int | None = None  # position in location.values
        self.detail: view.CharacteristicView | None = None
        self._detail_key: tuple[object, ...] | None = None  # the line's key when it was read
        self._reading: Worker[None] | None = None  # the detail being read, if any
        self._read_again = False  # the line moved on while the detail was being read
        # a new phase asked for here, and how many phases there were then (until one more comes)
        self.requested: tuple[int, int] | None = None

    def compose(self) -> ComposeResult:
        g = self.lw.glyphs
        yield TopBar(id="topbar")
        with CloseUpBody(id="closeup-body"), Horizontal(id="closeup-grid"):
            with Vertical(id="closeup-charts"):
                yield ChartPane(g, id="closeup-location")
                yield Vertical(id="closeup-detectors")
                yield ChartPane(g, id="closeup-dispersion")
                yield Static(id="closeup-cursor")
            with Vertical(id="closeup-figures"):
                yield Static(id="closeup-box")
                yield Static(id="closeup-phases")
                yield Static(id="closeup-trend")
                yield Static(id="closeup-power")
                yield Static(id="closeup-alarms")
        yield KeyFooter()

    async def on_mount(self) -> None:
        self.query_one(CloseUpBody).focus()
        self.ready = True
        self.show_line()
        if self._reading is not None:  # the first detail, before this screen takes keys; the
            await self._reading.wait()  # loop stays free meanwhile (it is read in a thread)

    def on_resize(self, event: Resize) -> None:
        wide = event.size.width >= WIDE_AT[0] and event.size.height >= WIDE_AT[1]
        self.set_class(wide, "-wide")
        self.refresh_bindings()
        self.call_after_refresh(self._draw_figures)

    def _line_key(self) -> tuple[object, ...] | None:
        """What the line's picture says about this characteristic: while it stays the same, a
        new picture (another characteristic moved) needs no new read of its detail."""
        cv = next((c for c in self.lw.line.characteristics if c.name == self.characteristic),
                  None)
        if cv is None:
            return None
        loc = cv.location
        limits = (len(loc.phase_limits), loc.center, loc.ucl, loc.lcl) if loc else ()
        return (cv.points, cv.state, cv.open_alarms, cv.last_value, cv.pending_phase_start,
                cv.stale, cv.stuck, cv.cpk, limits)

    def show_line(self) -> None:
        key = self._line_key()
        if self.detail is not None and key is not None and key == self._detail_key:
            self._draw_top_bar(self.detail)  # the line's alarm counts may have moved
            super().show_line()
            return
        if self._reading is not None and self._reading.is_running:
            self._read_again = True  # one read at a time; the newest key once this one is in
        else:
            self._reading = self._read_detail(key)
        if self.detail is not None:
            self._draw_top_bar(self.detail)
        super().show_line()

    @work(thread=True, exclusive=True, group="detail")
    def _read_detail(self, key: tuple[object, ...] | None) -> None:
        """Read the characteristic's detail with its figures (in a thread: SQLite and numpy)
        and post it back. A store that is busy or gone is expected and told; anything else is
        a bug, which the app's crash handler takes."""
        try:
            outcome: Message = messages.DetailArrived(
                self.lw.source.detail(self.characteristic), key)
        except (LinewatchError, OSError) as exc:
            outcome = messages.DetailUnread(messages.problem_words(exc))
        if not get_current_worker().is_cancelled:
            self.post_message(outcome)

    @on(messages.DetailUnread)
    def _detail_unread(self, message: messages.DetailUnread) -> None:
        """Keep the last picture; the next change tries again."""
        self.notify(f"cannot read {self.characteristic}: {message.problem}", severity="error")
        self._next_read()

    @on(messages.DetailArrived)
    def _detail_arrived(self, message: messages.DetailArrived) -> None:
        self.detail, self._detail_key = message.detail, message.key
        if self.drawable:
            self._place_cursor()
            self._draw()
            # fitted again once laid out: the detail can land before a resize's new layout
            self.call_after_refresh(self._draw_figures)
        self._next_read()

    def _next_read(self) -> None:
        if self._read_again and self.drawable:
            self._read_again = False
            self.show_line()

    def _place_cursor(self) -> None:
        """On the newest point at first (or the point an alarm asked for), then kept."""
        cv = self.detail
        loc = cv.location if cv else None
        if loc and loc.values:
            if self.cursor is None:
                self.cursor = len(loc.values) - 1
                if self.focus_index is not None and self.focus_index in loc.indices:
                    self.cursor = loc.indices.index(self.focus_index)
            self.cursor = min(self.cursor, len(loc.values) - 1)

    def _draw(self) -> None:
        cv = self.detail
        bar = self.query_one(TopBar)
        if cv is None:
            bar.show(self.lw.line, f"close-up {self.characteristic}", "gone from the line")
            return
        self._draw_top_bar(cv)
        self._draw_cursor()
        self._draw_detectors(cv)
        dispersion = self.query_one("#closeup-dispersion", ChartPane)
        dispersion.show(cv.dispersion)
        # an attribute chart is one chart (its spread follows from the centre and each n):
        # the location pane takes the room
        dispersion.display = cv.attribute is None
        self._draw_figures()

    def _draw_detectors(self, cv: view.CharacteristicView) -> None:
        """One pane per EWMA / CUSUM chart under the location chart (mounted as they come)."""
        from linewatch.faces.tui.widgets.detector_chart import DetectorPane

        box = self.query_one("#closeup-detectors", Vertical)
        panes = list(box.query(DetectorPane))
        if len(panes) != len(cv.detectors):
            box.remove_children()
            panes = [DetectorPane(self.lw.glyphs, id=f"closeup-detector-{d.detector}")
                     for d in cv.detectors]
            if panes:
                box.mount_all(panes)
        for pane, chart in zip(panes, cv.detectors, strict=True):
            pane.chart = chart

    def _draw_top_bar(self, cv: view.CharacteristicView) -> None:
        unit = f" [{cv.unit}]" if cv.unit else ""
        extra = f"{STATE_WORDS.get(cv.state, cv.state)}, {count(cv.points, 'reading')}"
        if cv.limits_refused:  # not "learning": more readings will not bring limits
            extra = f"limits refused, {count(cv.points, 'reading')}: {cv.limits_refused}"
        self.query_one(TopBar).show(self.lw.line, f"close-up {cv.name}{unit}", extra)

    def _draw_figures(self) -> None:
        cv = self.detail
        if cv is None or not self.drawable:  # a resize can queue this just before the screen goes
            return
        width = max(30, self.query_one("#closeup-box", Static).content_size.width or 60)
        if cv.attribute is not None:
            self.query_one("#closeup-box", Static).update(attribute_text(cv.attribute))
        else:
            self._draw_box(cv, width)
        if cv.attribute is not None and cv.location is not None and cv.location.phase_limits:
            self.query_one("#closeup-phases", Static).update(attribute_phases(cv))
        else:
            self._draw_phases(cv)
        self.query_one("#closeup-trend", Static).update(self._trend_text(cv))
        power = self.query_one("#closeup-power", Static)
        power.display = cv.power is not None
        power.update(self._power_text(cv))
        self.query_one("#closeup-alarms", Static).update(self._alarms_text(cv.name))

    def _draw_phases(self, cv: view.CharacteristicView) -> None:
        self.query_one("#closeup-phases", Static).update(Group(
            Text("phases of limits", "bold"),
            phase_table(cv.phases) if cv.phases else Text(
                "no limits: refused" if cv.limits_refused else "no limits yet", palette.LABEL),
            *([Text(visible(cv.phase_comparison))] if cv.phase_comparison else []),
        ))

    def _draw_box(self, cv: view.CharacteristicView, width: int) -> None:
        figures = cv.figures
        box = draw_box_plot(figures.box if figures else None, cv.lsl, cv.usl, width,
                            self.lw.glyphs, cv.decimals)
        box.end = "\n"  # Textual counts newlines to size a Group
        heading = (f"last {figures.box_points} {figures.box_of} against the spec limits"
                   if figures else "box plot")
        self.query_one("#closeup-box", Static).update(Group(Text(heading, "bold"), box))

    def _alarms_text(self, name: str) -> Text:
        """This characteristic's open alarms, so the close-up answers 'why is it red'."""
        from linewatch.domain.clock import time_of_day
        from linewatch.faces.tui.formatting import ALARM_STATE_WORDS

        mine = [a for a in self.lw.alarms_in_order()
                if a.characteristic == name and a.state != view.NORMAL]
        text = Text(end="")
        text.append(f"open alarms ({len(mine)})\n", "bold")
        for a in mine[:8]:
            text.append(f"P{a.priority} {time_of_day(a.raised_at)} ")
            text.append(f"{ALARM_STATE_WORDS.get(a.state, a.state):<9}",
                        "bold reverse" if a.state == view.UNACKNOWLEDGED else "")
            text.append(f" {visible(a.description or a.rule)}\n")
        if not mine:
            text.append("none", palette.LABEL)
        return text

    def _cursor_text(self, cv: view.CharacteristicView) -> Text:
        loc = cv.location
        text = Text(end="")
        if cv.limits_refused:
            text.append(f"limits refused: {visible(cv.limits_refused)}\n",
                        palette.STATE_STYLE[view.STATE_REFUSED])
            text.append("more readings will not change this baseline: start a new baseline (n) "
                        "where the readings vary, or give known limits (center and sigma in "
                        "the config)\n", palette.LABEL)
        elif cv.baseline_needed:
            text.append(f"learning: {count(cv.baseline_needed, point_word(cv))} more before "
                        "limits exist\n",
                        palette.STATE_STYLE[view.STATE_LEARNING])
        pending = cv.pending_phase_start  # known to every instance through the store
        if pending is None and self.requested is not None and loc is not None:
            start, phases_then = self.requested
            if len(loc.phase_limits) > phases_then:
                self.requested = None  # its limits have arrived and are drawn
            else:
                pending = start
        if pending is not None:
            text.append(f"new phase from {point_word(cv)} {pending} asked for: its limits come "
                        f"once enough {point_word(cv)}s have arrived\n",
                        palette.STATE_STYLE[view.STATE_LEARNING])
        if loc and self.cursor is not None and loc.values:
            i = self.cursor
            idx = loc.indices[i] if i < len(loc.indices) else i
            mean_of = f" (mean of {cv.subgroup_size})" if cv.subgroup_size > 1 else ""
            if loc.steps and i < len(loc.sizes):  # its own limits, from its own size
                mean_of = f" (n {loc.sizes[i]:g})"
            text.append(f"cursor: {point_word(cv)} {idx} = "
                        f"{fmt_reading(loc.values[i], cv.decimals)}{mean_of}", "bold")
            rules = loc.rules[i] if i < len(loc.rules) else ""
            if rules:
                text.append(f"  signals {rules}", palette.SIGNAL)
            text.append("\n")
        legend = {**(loc.legend if loc else {}),
                  **(cv.dispersion.legend if cv.dispersion else {})}
        if legend:
            text.append("marks: ", palette.LABEL)
            text.append("; ".join(f"{mark}={visible(rule)} {words}".strip()
                                  for rule, (mark, words) in sorted(legend.items())))
        return text

    def _power_text(self, cv: view.CharacteristicView) -> Text:
        """The rule set's detection power: expected points to a signal after a shift."""
        from linewatch.present.power_view import table_lines

        if cv.power is None:
            return Text("")
        lines = table_lines(cv.power, indent="", label=24, cell=7)
        text = Text(end="")
        text.append(visible(lines[0]) + "\n", "bold")
        text.append("\n".join(visible(line[2:]) for line in lines[1:]))
        return text

    def _trend_text(self, cv: view.CharacteristicView) -> Text:
        fit = cv.figures.trend if cv.figures else view.TrendFigures(0)
        text = Text(end="")
        text.append(f"trend over the last {count(fit.points, point_word(cv))}\n", "bold")
        if fit.slope is None or fit.r2 is None or fit.adj_r2 is None or fit.p_value is None:
            text.append(f"too few {point_word(cv)}s, or no spread", palette.LABEL)
            return text
        text.append(f"slope {fit.slope:+.4g} {visible(cv.unit)}/{point_word(cv)}   "
                    f"R² {fit.r2:.2f}   adj. R² {fit.adj_r2:.2f}   p {fit.p_value:.3g}\n")
        if fit.points_to_spec is None:
            text.append("no significant trend towards a spec limit (p < 0.05 needed)",
                        palette.LABEL)
        else:
            text.append(projection_words(fit.slope, fit.points_to_spec, cv.lsl, cv.usl,
                                         cv.seconds_per_point, cv.decimals, point_word(cv)),
                        palette.SIGNAL)
        return text

    def action_move(self, step: int) -> None:
        loc = self.detail.location if self.detail else None
        if not loc or not loc.values or self.cursor is None:
            return
        self.cursor = max(0, min(len(loc.values) - 1, self.cursor + step))
        self._draw_cursor()

    def action_move_to(self, where: int) -> None:
        loc = self.detail.location if self.detail else None
        if not loc or not loc.values:
            return
        self.cursor = where if where >= 0 else len(loc.values) - 1
        self._draw_cursor()

    def _draw_cursor(self) -> None:
        """A cursor move changes the location chart and the cursor line, nothing else."""
        cv = self.detail
        if cv is None:
            return
        self.query_one("#closeup-location", ChartPane).show(cv.location, cv.lsl, cv.usl,
                                                            self.cursor, cv.decimals)
        self.query_one("#closeup-cursor", Static).update(self._cursor_text(cv))

    def action_back(self) -> None:
        self.dismiss()

    def action_new_baseline(self) -> None:
        from linewatch.faces.tui.screens.restart_panel import RestartChoice, RestartPanel

        cv = self.detail
        loc = cv.location if cv else None
        if cv is None or not loc or not loc.values or self.cursor is None:
            self.notify("no points to start a new phase at")
            return
        start = loc.indices[self.cursor] if self.cursor < len(loc.indices) else self.cursor
        last = loc.indices[-1] if loc.indices else len(loc.values) - 1
        phases_now = len(loc.phase_limits)

        def done(choice: RestartChoice | None) -> None:
            if not choice:
                return

            def asked(_: object) -> None:
                self.requested = (choice.start_index, phases_now)
                if self.drawable:
                    self._draw()

            self.ask("new_baseline", cv.name, choice.start_index, choice.reason,
                     done=lambda _: f"new baseline for {cv.name} from {point_word(cv)} "
                                    f"{choice.start_index}",
                     then=asked)

        self.app.push_screen(RestartPanel(cv.name, start, last), done)


def attribute_text(a: view.AttributeFigures) -> Text:
    """The capability of attribute data: the overall proportion (or rate) with its exact 95%
    interval and ppm; Cp and Cpk do not apply, and the close-up says so."""
    rate = a.what != "proportion nonconforming"
    text = Text(end="")
    text.append(f"{a.what} overall\n", "bold")
    if a.overall is None or a.lower95 is None or a.upper95 is None:
        text.append("no points yet\n", palette.LABEL)
    else:
        method = "exact Poisson" if rate else "Clopper-Pearson"
        shown = (f"{a.overall:.4g}" if rate else f"{100 * a.overall:.3g}%")
        low = f"{a.lower95:.4g}" if rate else f"{100 * a.lower95:.3g}%"
        high = f"{a.upper95:.4g}" if rate else f"{100 * a.upper95:.3g}%"
        text.append(f"{shown}  95% {low} to {high} ({method})\n")
        what = "defects" if rate else "failed"
        text.append(f"{a.events:,} {what} in {a.exposure:,.0f} "
                    f"{'units' if rate else 'parts'}; {a.ppm or 0:,.0f} ppm\n", palette.LABEL)
    text.append(f"{a.not_applicable}\n", palette.LABEL)
    return text


def attribute_phases(cv: view.CharacteristicView) -> Text:
    """The phases of an attribute chart: where each starts and its centre line (the limits
    step with each subgroup's size, so only the centre is one figure)."""
    loc = cv.location
    assert loc is not None
    starts = [loc.phase_limits[0][0], *loc.phase_starts]
    text = Text(end="")
    text.append("phases of limits\n", "bold")
    for k, start in enumerate(starts):
        centre = next((c for s, c, *_ in reversed(loc.phase_limits) if s >= start), None)
        if k + 1 < len(starts):
            centre = next((c for s, c, *_ in loc.phase_limits if start <= s < starts[k + 1]),
                          centre)
        shown = "-" if centre is None else f"{centre:.4g}"
        text.append(f"phase {k} from point {start}: CL {shown}; limits step with n\n")
    return text

