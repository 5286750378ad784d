"""The acknowledgement panel: a digit picks the reason, a note is optional, Enter confirms."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.events import Key
from textual.screen import ModalScreen
from textual.widgets import Input, OptionList, Static
from textual.widgets.option_list import Option

from linewatch.domain.safe_text import visible


@dataclass(frozen=True, slots=True)
class AckChoice:
    """What the operator chose: one reason code and an optional free-text note."""

    reason: str
    note: str = ""


class AckPanel(ModalScreen[AckChoice | None]):
    """Three keystrokes in the common case: the key that opened it, a digit, Enter."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="close without acknowledging"),
        Binding("tab", "to_note", "Note", tooltip="type a note before confirming"),
    ]

    def __init__(self, subject: str, reasons: list[str]) -> None:
        super().__init__()
        self.subject = subject
        self.reasons = reasons
        self.reason: str | None = None

    @property
    def half_typed(self) -> bool:
        """A reason picked or a note begun: quitting now would lose it, so the app asks."""
        return self.reason is not None or bool(self.query_one("#ack-note", Input).value)

    def compose(self) -> ComposeResult:
        with Vertical(id="ack-box", classes="panel"):
            yield Static(Text(f"Acknowledge {visible(self.subject)}"), id="ack-subject",
                         classes="panel-title")
            yield OptionList(
                *[Option(Text(f"{i} {visible(r)}"), id=str(i))
                  for i, r in enumerate(self.reasons[:9], 1)],
                id="ack-reasons",
            )
            yield Input(placeholder="note (optional)", id="ack-note")
            yield Static("digit: reason   Tab: note   Enter: confirm   Esc: cancel",
                         id="ack-hint", classes="panel-hint")

    def on_mount(self) -> None:
        self.query_one("#ack-reasons", OptionList).focus()

    def on_key(self, event: Key) -> None:
        """A digit picks its reason, unless the note field is taking the keystrokes."""
        if self.query_one("#ack-note", Input).has_focus:
            return
        if event.character and event.character.isdigit():
            event.stop()
            event.prevent_default()
            number = int(event.character)
            if 1 <= number <= min(9, len(self.reasons)):
                self._pick(number - 1)

    @on(OptionList.OptionSelected, "#ack-reasons")
    def _selected(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        self._pick(event.option_index)

    def _pick(self, index: int) -> None:
        self.reason = self.reasons[index]
        reasons = self.query_one("#ack-reasons", OptionList)
        reasons.highlighted = index
        hint = self.query_one("#ack-hint", Static)
        hint.update(Text(f"reason: {visible(self.reason)}   type a note or Enter to confirm   "
                         "Esc: cancel"))
        self.query_one("#ack-note", Input).focus()

    def action_to_note(self) -> None:
        self.query_one("#ack-note", Input).focus()

    @on(Input.Submitted, "#ack-note")
    def _confirm(self, event: Input.Submitted) -> None:
        event.stop()
        if self.reason is None:
            self.query_one("#ack-hint", Static).update("pick a reason first: press its digit")
            self.query_one("#ack-reasons", OptionList).focus()
            return
        self.dismiss(AckChoice(self.reason, event.value.strip()))

    def action_cancel(self) -> None:
        self.dismiss(None)
