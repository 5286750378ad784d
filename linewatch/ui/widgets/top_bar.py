"""The one-line bar at the top: line title, where you are, what needs attention, messages."""

from __future__ import annotations

from rich.text import Text
from textual.widgets import Static

from linewatch import view


class TopBar(Static):
    """Title · view name · open alarms · catching up · the monitor's message · filter."""

    def show(self, line: view.LineSnapshot, where: str, extra: str = "") -> None:
        unack = sum(1 for a in line.alarms if a.state == view.UNACKNOWLEDGED)
        text = Text(no_wrap=True, overflow="ellipsis", end="")
        text.append(f" {line.title} ", "bold")
        text.append(f"| {where} ")
        if line.role == "viewer":
            text.append("| viewing ")
        if unack:
            text.append(f"| {unack} UNACK ", "bold reverse")
        else:
            text.append("| no unacknowledged alarm ")
        if line.catching_up is not None:
            text.append(f"| catching up {line.catching_up:.0%} ", "italic")
        if extra:
            text.append(f"| {extra} ")
        if line.message:
            text.append(f"| {line.message}")
        self.update(text, layout=False)  # always one line: no need to lay the screen out
