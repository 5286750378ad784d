"""The new-baseline panel: the point where the new phase starts and why."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from rich.text import Text
from textual.binding import Binding, BindingType

from linewatch.domain.safe_text import visible
from linewatch.faces.tui.screens.panel import ValueThenReason


@dataclass(frozen=True, slots=True)
class RestartChoice:
    """The first point (index in the chart's series) of the new phase, and the reason."""

    start_index: int
    reason: str


class RestartPanel(ValueThenReason[RestartChoice, int]):
    """Prefilled with the cursor's point; Enter moves to the reason, then confirms."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="close without a new baseline")
    ]
    PANEL = "restart"
    VALUE = "at"
    VALUE_TYPE = "integer"
    VALUE_PLACEHOLDER = "first point of the new phase"
    REASON_PLACEHOLDER = "reason (required), e.g. new die fitted"
    HINT = "Enter: next / confirm   Shift+Tab: back to the point   Esc: cancel"
    START_AT_REASON = True

    def __init__(self, characteristic: str, start_index: int, last_index: int) -> None:
        super().__init__(str(start_index))
        self.characteristic = characteristic
        self.start_index = start_index
        self.last_index = last_index

    def title_text(self) -> Text:
        return Text(f"New baseline for {visible(self.characteristic)}: limits are estimated "
                    "again from the points from here on; the old limits stay on the history.")

    def label_text(self) -> str:
        return f"first point of the new phase (0-{self.last_index}), then the reason:"

    def parse_value(self, text: str) -> int:
        text = text.strip()
        try:
            index = int(text)
        except ValueError:
            raise ValueError(f"not a point number: {text!r}") from None
        if not 0 <= index <= self.last_index:
            raise ValueError(f"the point must be between 0 and {self.last_index}")
        return index

    def choice(self, value: int, text: str, reason: str) -> RestartChoice:
        return RestartChoice(value, reason)
