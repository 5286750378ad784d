"""The one-line bar at the top: line title, where you are, what needs attention, messages."""

from __future__ import annotations

from rich.text import Text
from textual.events import Resize
from textual.widgets import Static

from linewatch.domain.durations import format_duration
from linewatch.domain.safe_text import visible
from linewatch.faces.tui.formatting import to_acknowledge
from linewatch.present import view
from linewatch.present.plant_words import link_words


def acknowledge_words(waiting: int, active: int, short: bool = False) -> str:
    """'5 to acknowledge (2 still active)', or 'nothing to acknowledge', from the counts of
    `to_acknowledge`; `short` for a narrow terminal: '5 to ack, 2 active'."""
    if not waiting:
        return "nothing to ack" if short else "nothing to acknowledge"
    if short:
        return f"{waiting} to ack, {active} active"
    return f"{waiting} to acknowledge ({active or 'none'} still active)"


class TopBar(Static):
    """Title · view name · alarms to acknowledge · catching up · the monitor's message · filter.

    When the line is narrower than the whole text, the title goes first, so where you are and
    what waits for you stay readable."""

    _last: tuple[view.LineSnapshot, str, str] | None = None
    _counted: tuple[view.LineSnapshot, tuple[int, int]] | None = None

    def _to_acknowledge(self, line: view.LineSnapshot) -> tuple[int, int]:
        """`to_acknowledge` of the picture, counted once per picture (a queue of 30,000
        alarms is drawn again on each page and resize)."""
        if self._counted is None or self._counted[0] is not line:
            self._counted = (line, to_acknowledge(line.alarms))
        return self._counted[1]

    def show(self, line: view.LineSnapshot, where: str, extra: str = "") -> None:
        self._last = (line, where, extra)
        self.update(self._compose_text(line, where, extra), layout=False)  # always one line

    def _compose_text(self, line: view.LineSnapshot, where: str, extra: str) -> Text:
        waiting, active = self._to_acknowledge(line)
        loud = "bold reverse" if waiting else ""
        head: list[tuple[str, str]] = [(line.title, "bold"), (where, "")]
        if line.role == "viewer":
            head.append(("viewing", ""))
        # what must never be missed comes before the alarm count, and stays at every width
        alerts: list[tuple[str, str]] = []
        if line.problem:
            alerts.append((f"MONITORING FAILING: {line.problem}", "bold reverse"))
        if line.flood is not None:
            window = format_duration(line.flood_window)
            alerts.append((f"ALARM FLOOD: {line.flood} in {window}", "bold reverse"))
        tail: list[tuple[str, str]] = []
        if line.catching_up is not None:
            tail.append((f"catching up {line.catching_up:.0%}", "italic"))
        if extra:
            tail.append((extra, ""))
        if line.message:
            tail.append((line.message, ""))
        width = self.size.width or (self.app.size.width if self.is_attached else 0)
        # narrower and narrower: first without the title, then with the alarm count in short
        for drop, short in ((0, False), (1, False), (1, True)):
            link = link_words(line.plant_down_since, line.plant_waiting, short)
            # the line keeps monitoring while its link is down: after what the operator must see
            parts = [*head[drop:], *alerts, (acknowledge_words(waiting, active, short), loud),
                     *([(link, "bold")] if link else []), *tail]
            if not width or sum(len(p) + 3 for p, _ in parts) <= width:
                break
        text = Text(no_wrap=True, overflow="ellipsis", end="")
        for k, (raw, style) in enumerate(parts):
            part = visible(raw)  # the title, names and messages come from outside
            if k == 0:
                text.append(f" {part} ", style)
            else:
                text.append("| ")
                text.append(part, style)
                text.append(" ")
        return text

    def on_resize(self, event: Resize) -> None:
        if self._last is not None:
            self.show(*self._last)
