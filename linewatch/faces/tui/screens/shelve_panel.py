"""The shelving panel: a duration (30m, 1h30m) and a reason, both required."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from rich.text import Text
from textual.binding import Binding, BindingType

from linewatch.domain.durations import parse_duration
from linewatch.domain.safe_text import visible
from linewatch.faces.tui.screens.panel import ValueThenReason

DEFAULT_SHELF = "30m"
LONGEST_SHELF = 24 * 3600.0  # a shelf longer than a day is a config change, not a shelf


@dataclass(frozen=True, slots=True)
class ShelveChoice:
    """How long (seconds, and as typed) and why."""

    seconds: float
    text: str
    reason: str


class ShelvePanel(ValueThenReason[ShelveChoice, float]):
    """Enter moves from the duration to the reason, then confirms."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="close without shelving")
    ]
    PANEL = "shelve"
    VALUE = "for"
    VALUE_PLACEHOLDER = "for how long, e.g. 30m or 1h30m"

    def __init__(self, subject: str) -> None:
        super().__init__(DEFAULT_SHELF)
        self.subject = subject

    def title_text(self) -> Text:
        return Text(f"Shelve {visible(self.subject)}")

    def parse_value(self, text: str) -> float:
        seconds = parse_duration(text)
        if not 0 < seconds <= LONGEST_SHELF:
            raise ValueError("shelve for more than 0 and at most 24h")
        return seconds

    def choice(self, value: float, text: str, reason: str) -> ShelveChoice:
        return ShelveChoice(value, text, reason)
