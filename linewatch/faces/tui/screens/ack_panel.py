"""The acknowledgement panel: a digit picks the reason, a note is optional, Enter confirms."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import ClassVar

from rich.text import Text
from textual import on
from textual.binding import Binding, BindingType
from textual.events import Key
from textual.widget import Widget
from textual.widgets import Input, OptionList
from textual.widgets.option_list import Option

from linewatch.domain.safe_text import visible
from linewatch.faces.tui.screens.panel import ReasonPanel


@dataclass(frozen=True, slots=True)
class AckChoice:
    """What the operator chose: one reason code and an optional free-text note."""

    reason: str
    note: str = ""


class AckPanel(ReasonPanel[AckChoice]):
    """Three keystrokes in the common case: the key that opened it, a digit, Enter."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="close without acknowledging"),
        Binding("tab", "to_note", "Note", tooltip="type a note before confirming"),
    ]
    PANEL = "ack"
    HINT = "digit: reason   Tab: note   Enter: confirm   Esc: cancel"

    def __init__(self, subject: str, reasons: list[str]) -> None:
        super().__init__()
        self.subject = subject
        self.reasons = reasons
        self.reason: str | None = None

    @property
    def note_field(self) -> Input:
        return self.query_one("#ack-note", Input)

    @property
    def half_typed(self) -> bool:
        """A reason picked or a note begun: quitting now would lose it, so the app asks."""
        return self.reason is not None or bool(self.note_field.value)

    def title_text(self) -> Text:
        return Text(f"Acknowledge {visible(self.subject)}")

    def body(self) -> Iterable[Widget]:
        yield OptionList(
            *[Option(Text(f"{i} {visible(r)}"), id=str(i))
              for i, r in enumerate(self.reasons[:9], 1)],
            id="ack-reasons",
        )
        yield Input(placeholder="note (optional)", id="ack-note")

    def on_mount(self) -> None:
        self.query_one("#ack-reasons", OptionList).focus()
        if not self.reasons:
            self.hint("no reason codes are configured for this alarm   Esc: cancel")

    def on_key(self, event: Key) -> None:
        """A digit picks its reason, unless the note field is taking the keystrokes."""
        if self.note_field.has_focus:
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
        self.query_one("#ack-reasons", OptionList).highlighted = index
        self.hint(Text(f"reason: {visible(self.reason)}   type a note or Enter to confirm   "
                       "Esc: cancel"))
        self.note_field.focus()

    def action_to_note(self) -> None:
        self.note_field.focus()

    @on(Input.Submitted, "#ack-note")
    def _confirm(self, event: Input.Submitted) -> None:
        event.stop()
        if self.reason is None:
            self.hint("pick a reason first: press its digit")
            self.query_one("#ack-reasons", OptionList).focus()
            return
        self.dismiss(AckChoice(self.reason, event.value.strip()))
