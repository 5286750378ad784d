"""Every key of every view, generated from the bindings themselves, plus what the marks mean."""

from __future__ import annotations

from typing import ClassVar

from rich.console import Group
from rich.table import Table
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from linewatch.faces.tui.palette import CPK_THRESHOLDS
from linewatch.present.marks import PATTERN_MARKS


def key_sections() -> list[tuple[str, list[Binding]]]:
    """(where, bindings) for each view and panel, straight from their BINDINGS."""
    from linewatch.faces.tui.app import LinewatchApp
    from linewatch.faces.tui.screens.ack_panel import AckPanel
    from linewatch.faces.tui.screens.board import BoardScreen
    from linewatch.faces.tui.screens.close_up import CloseUpBody, CloseUpScreen
    from linewatch.faces.tui.screens.queue import AlarmQueueScreen
    from linewatch.faces.tui.screens.restart_panel import RestartPanel
    from linewatch.faces.tui.screens.shelve_panel import ShelvePanel

    def own(cls: type) -> list[Binding]:
        return [b for b in cls.__dict__.get("BINDINGS", []) if isinstance(b, Binding)]

    close_up = own(CloseUpScreen)
    close_up += [b for b in own(CloseUpBody) if b.key not in {c.key for c in close_up}]
    return [
        ("everywhere", own(LinewatchApp)),
        ("line board", own(BoardScreen)),
        ("alarm queue", own(AlarmQueueScreen)),
        ("close-up", close_up),
        ("acknowledge panel (1-9 pick the reason)", own(AckPanel)),
        ("shelve panel", own(ShelvePanel)),
        ("new-baseline panel", own(RestartPanel)),
    ]


def key_display(binding: Binding) -> str:
    """How the key is written on the keyboard."""
    if binding.key_display:
        return binding.key_display
    return {"escape": "Esc", "enter": "Enter", "tab": "Tab", "pageup": "PgUp",
            "pagedown": "PgDn", "home": "Home", "end": "End", "ctrl+q": "Ctrl+Q",
            "shift+left": "Sh+<-", "shift+right": "Sh+->", "right": "->", "left": "<-"}.get(
        binding.key, binding.key)


class KeysHelp(ModalScreen[None]):
    """Opened with `?`; any of Esc, ? or q closes it."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "close", "Close", show=False),
        Binding("question_mark", "close", "Close", show=False),
        Binding("q", "close", "Close", show=False),
    ]

    def compose(self) -> ComposeResult:
        with VerticalScroll(id="help-box", classes="panel"):
            yield Static(self._content(), id="help-text")

    def on_mount(self) -> None:
        self.query_one("#help-box", VerticalScroll).focus()  # arrows and PgUp/PgDn scroll

    def _content(self) -> Group:
        parts: list[Text | Table] = [Text("Keys  (Esc closes)", "bold"), Text(
            "The footer shows the keys most needed where you are; on a narrow terminal it "
            "leaves some out. Every key is listed here.", "italic")]
        for where, bindings in key_sections():
            parts.append(Text(f"\n{where}", "underline"))
            table = Table(box=None, show_header=False, pad_edge=False, expand=False)
            table.add_column(style="bold", no_wrap=True, width=8)
            table.add_column()
            for b in bindings:
                table.add_row(f"  {key_display(b)}", b.tooltip or b.description)
            parts.append(table)
        g = self.app.glyphs  # type: ignore[attr-defined]
        marks = Text()
        marks.append("\nstates: ", "bold")
        marks.append(", ".join(f"{glyph} {state}" for state, glyph in g.state.items()))
        marks.append(
            "\nsparklines and charts: a letter marks a signalling point with the kind of "
            "pattern found there, the most urgent first: "
            + "; ".join(f"{mark} {words}" for mark, words in PATTERN_MARKS.values())
            # the glyph inside words and brackets, so a line break never leaves it alone at a
            # line end where it would read as the panel's border
            + f". A vertical line ({g.phase}) separates phases of limits, and each phase's points "
            "are drawn against that phase's own CL, UCL, LCL and zones; [ ] are LSL and USL."
            f"\nspec margin: [ ] the spec limits, {g.band} the recent mean "
            f"{'+/-' if g.ascii else '±'} 3{g.sigma}, "
            f"{g.mean} the mean; then the margin to the nearer limit in {g.sigma} (standard "
            "deviations), Cpk and, after >, "
            "its 95% lower bound."
            f"\nCpk colours: below {CPK_THRESHOLDS[0]:.2f} poor, below {CPK_THRESHOLDS[1]:.2f} "
            "thin, else good - thresholds of common practice, not of this program."
        )
        return Group(*parts, marks)

    def action_close(self) -> None:
        self.dismiss()
