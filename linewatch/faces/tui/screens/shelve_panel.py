"""The shelving panel: a duration (30m, 1h30m) and a reason, both required."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Static

from linewatch.domain.durations import parse_duration
from linewatch.domain.safe_text import visible

DEFAULT_SHELF = "30m"
LONGEST_SHELF = 24 * 3600.0  # a shelf longer than a day is a config change, not a shelf


@dataclass(frozen=True, slots=True)
class ShelveChoice:
    """How long (seconds, and as typed) and why."""

    seconds: float
    text: str
    reason: str


class ShelvePanel(ModalScreen[ShelveChoice | None]):
    """Enter moves from the duration to the reason, then confirms."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="close without shelving")
    ]

    def __init__(self, subject: str) -> None:
        super().__init__()
        self.subject = subject

    def compose(self) -> ComposeResult:
        with Vertical(id="shelve-box", classes="panel"):
            yield Static(Text(f"Shelve {visible(self.subject)}"), classes="panel-title")
            yield Input(DEFAULT_SHELF, placeholder="for how long, e.g. 30m or 1h30m",
                        id="shelve-for")
            yield Input(placeholder="reason (required)", id="shelve-reason")
            yield Static("Enter: next / confirm   Esc: cancel", id="shelve-hint",
                         classes="panel-hint")

    def on_mount(self) -> None:
        self.query_one("#shelve-for", Input).focus()

    @on(Input.Submitted, "#shelve-for")
    def _duration_done(self, event: Input.Submitted) -> None:
        event.stop()
        if self._seconds() is not None:
            self.query_one("#shelve-reason", Input).focus()

    @on(Input.Submitted, "#shelve-reason")
    def _reason_done(self, event: Input.Submitted) -> None:
        event.stop()
        seconds = self._seconds()
        if seconds is None:
            self.query_one("#shelve-for", Input).focus()
            return
        reason = event.value.strip()
        if not reason:
            self._say("a reason is required")
            return
        text = self.query_one("#shelve-for", Input).value.strip()
        self.dismiss(ShelveChoice(seconds, text, reason))

    def _seconds(self) -> float | None:
        text = self.query_one("#shelve-for", Input).value
        try:
            seconds = parse_duration(text)
        except ValueError as exc:
            self._say(str(exc))
            return None
        if not 0 < seconds <= LONGEST_SHELF:
            self._say("shelve for more than 0 and at most 24h")
            return None
        return seconds

    def _say(self, problem: str) -> None:
        self.query_one("#shelve-hint", Static).update(Text(f"{visible(problem)}   Esc: cancel"))

    def action_cancel(self) -> None:
        self.dismiss(None)
