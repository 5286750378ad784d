"""The new-baseline panel: the point where the new phase starts and why."""

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

from linewatch.domain.safe_text import visible


@dataclass(frozen=True, slots=True)
class RestartChoice:
    """The first point (index in the chart's series) of the new phase, and the reason."""

    start_index: int
    reason: str


class RestartPanel(ModalScreen[RestartChoice | None]):
    """Prefilled with the cursor's point; Enter moves to the reason, then confirms."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="close without a new baseline")
    ]

    def __init__(self, characteristic: str, start_index: int, last_index: int) -> None:
        super().__init__()
        self.characteristic = characteristic
        self.start_index = start_index
        self.last_index = last_index

    def compose(self) -> ComposeResult:
        with Vertical(id="restart-box", classes="panel"):
            yield Static(Text(
                f"New baseline for {visible(self.characteristic)}: limits are estimated again "
                "from the points from here on; the old limits stay on the history."),
                classes="panel-title",
            )
            yield Static(f"first point of the new phase (0-{self.last_index}), then the reason:",
                         classes="panel-label")
            yield Input(str(self.start_index), placeholder="first point of the new phase",
                        id="restart-at", type="integer")
            yield Input(placeholder="reason (required), e.g. new die fitted", id="restart-reason")
            yield Static("Enter: next / confirm   Shift+Tab: back to the point   Esc: cancel",
                         id="restart-hint", classes="panel-hint")

    def on_mount(self) -> None:
        self.query_one("#restart-reason", Input).focus()

    @on(Input.Submitted, "#restart-at")
    def _index_done(self, event: Input.Submitted) -> None:
        event.stop()
        if self._index() is not None:
            self.query_one("#restart-reason", Input).focus()

    @on(Input.Submitted, "#restart-reason")
    def _reason_done(self, event: Input.Submitted) -> None:
        event.stop()
        index = self._index()
        if index is None:
            self.query_one("#restart-at", Input).focus()
            return
        reason = event.value.strip()
        if not reason:
            self._say("a reason is required")
            return
        self.dismiss(RestartChoice(index, reason))

    def _index(self) -> int | None:
        text = self.query_one("#restart-at", Input).value.strip()
        try:
            index = int(text)
        except ValueError:
            self._say(f"not a point number: {text!r}")
            return None
        if not 0 <= index <= self.last_index:
            self._say(f"the point must be between 0 and {self.last_index}")
            return None
        return index

    def _say(self, problem: str) -> None:
        self.query_one("#restart-hint", Static).update(Text(f"{visible(problem)}   Esc: cancel"))

    def action_cancel(self) -> None:
        self.dismiss(None)
