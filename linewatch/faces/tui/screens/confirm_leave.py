"""Asked only when quitting would drop a half-typed acknowledgement."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Static


class ConfirmLeave(ModalScreen[bool]):
    """y quits and drops the acknowledgement; n or Esc goes back to it."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "answer(True)", "Quit anyway"),
        Binding("n", "answer(False)", "Back"),
        Binding("escape", "answer(False)", "Back", show=False),
    ]

    def compose(self) -> ComposeResult:
        with Vertical(id="leave-box", classes="panel"):
            yield Static("An acknowledgement is half typed and would be lost.",
                         classes="panel-title")
            yield Static("y: quit anyway   n / Esc: back to it", classes="panel-hint")

    def action_answer(self, leave: bool) -> None:
        self.dismiss(leave)
