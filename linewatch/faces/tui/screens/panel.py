"""The base of the small panels that ask before the store is changed (acknowledge, shelve, new
baseline): a titled box, what the panel asks, a hint line that also tells problems, Esc to
cancel. `ValueThenReason` adds the common shape "a value, then a required reason"."""

from __future__ import annotations

from collections.abc import Iterable
from typing import ClassVar, Generic, Literal, TypeVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widget import Widget
from textual.widgets import Input, Static

from linewatch.domain.safe_text import visible

ChoiceT = TypeVar("ChoiceT")
ValueT = TypeVar("ValueT")


class ReasonPanel(ModalScreen[ChoiceT | None], Generic[ChoiceT]):
    """Dismissed with the operator's choice, or None on Esc. Each panel keeps its own BINDINGS
    (the keys help lists them with their own words) and binds Esc to `cancel`."""

    PANEL = ""  # the prefix of the widgets' ids: "<PANEL>-box", "<PANEL>-hint"
    HINT = "Esc: cancel"

    def title_text(self) -> Text:
        """The panel's first line: what is about to change (names shown literally)."""
        raise NotImplementedError

    def body(self) -> Iterable[Widget]:
        """The widgets between the title and the hint."""
        raise NotImplementedError

    def compose(self) -> ComposeResult:
        with Vertical(id=f"{self.PANEL}-box", classes="panel"):
            yield Static(self.title_text(), id=f"{self.PANEL}-subject", classes="panel-title")
            yield from self.body()
            yield Static(self.HINT, id=f"{self.PANEL}-hint", classes="panel-hint")

    def hint(self, words: str | Text) -> None:
        """Replace the hint line (words from outside are shown literally)."""
        self.query_one(f"#{self.PANEL}-hint", Static).update(
            words if isinstance(words, Text) else Text(words))

    def say(self, problem: str) -> None:
        """Tell what is wrong with the input, on the hint line."""
        self.hint(Text(f"{visible(problem)}   Esc: cancel"))

    def action_cancel(self) -> None:
        self.dismiss(None)


class ValueThenReason(ReasonPanel[ChoiceT], Generic[ChoiceT, ValueT]):
    """A value (prefilled) and a reason, both required: Enter on the value checks it and moves
    to the reason, Enter on the reason confirms."""

    VALUE = "value"  # the value field's id is "<PANEL>-<VALUE>"
    HINT = "Enter: next / confirm   Esc: cancel"
    VALUE_PLACEHOLDER = ""
    VALUE_TYPE: ClassVar[Literal["integer", "number", "text"]] = "text"
    REASON_PLACEHOLDER = "reason (required)"
    START_AT_REASON = False  # focus the reason first (the value is usually right as given)

    def __init__(self, value: str) -> None:
        super().__init__()
        self.initial_value = value

    def label_text(self) -> str:
        """A line above the fields ("" for none)."""
        return ""

    def parse_value(self, text: str) -> ValueT:
        """The value typed, or ValueError with the problem in words."""
        raise NotImplementedError

    def choice(self, value: ValueT, text: str, reason: str) -> ChoiceT:
        """What the panel is dismissed with."""
        raise NotImplementedError

    @property
    def value_field(self) -> Input:
        return self.query_one(f"#{self.PANEL}-{self.VALUE}", Input)

    @property
    def reason_field(self) -> Input:
        return self.query_one(f"#{self.PANEL}-reason", Input)

    def body(self) -> Iterable[Widget]:
        if label := self.label_text():
            yield Static(label, classes="panel-label")
        yield Input(self.initial_value, placeholder=self.VALUE_PLACEHOLDER,
                    id=f"{self.PANEL}-{self.VALUE}", type=self.VALUE_TYPE)
        yield Input(placeholder=self.REASON_PLACEHOLDER, id=f"{self.PANEL}-reason")

    def on_mount(self) -> None:
        (self.reason_field if self.START_AT_REASON else self.value_field).focus()

    def _value(self) -> ValueT | None:
        try:
            return self.parse_value(self.value_field.value)
        except ValueError as exc:
            self.say(str(exc))
            return None

    @on(Input.Submitted)
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        value = self._value()
        if value is None:
            self.value_field.focus()
            return
        if event.input is self.value_field:
            self.reason_field.focus()
            return
        reason = self.reason_field.value.strip()
        if not reason:
            self.say("a reason is required")
            return
        self.dismiss(self.choice(value, self.value_field.value.strip(), reason))
