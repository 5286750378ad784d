"""Typed messages from the screen's worker threads back to its event loop.

Reading the store (a snapshot, a close-up's detail) and changing it (an acknowledgement, a
shelf, a new baseline) run in thread workers, since each may wait for SQLite or compute with
numpy. A worker never touches a widget: it posts one of these, and the one handler that owns
the state applies it on the loop.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

from textual.message import Message

from linewatch.present import view


def problem_words(error: BaseException) -> str:
    """An expected failure in one line: a LinewatchError's own message, else `Type: message`."""
    from linewatch.domain.errors import LinewatchError

    return str(error) if isinstance(error, LinewatchError) else f"{type(error).__name__}: {error}"


class LineChanged(Message):
    """The source says the line moved on (posted from the collector's thread): take a new
    picture when the pace allows. Bursts collapse into one."""

    def can_replace(self, message: Message) -> bool:
        return isinstance(message, LineChanged)


class LineArrived(Message):
    """A new picture of the line, read in a worker."""

    def __init__(self, line: view.LineSnapshot) -> None:
        super().__init__()
        self.line = line


class LineUnread(Message):
    """The picture could not be read (the store busy or gone); the last one stays."""

    def __init__(self, problem: str) -> None:
        super().__init__()
        self.problem = problem


@dataclass(frozen=True, slots=True)
class ActionRequest:
    """One call of `LineActions` asked for by a keypress. `done` says what happened in words
    (given the call's result); `then` runs on the loop after it succeeded."""

    call: str
    args: tuple[object, ...] = ()
    done: Callable[[object], str] | None = None
    then: Callable[[object], None] | None = field(default=None, compare=False)


class ActionDone(Message):
    """A request went through; `result` is what the call returned."""

    def __init__(self, request: ActionRequest, result: object) -> None:
        super().__init__()
        self.request = request
        self.result = result


class ActionRefused(Message):
    """A request was refused (a one-line LinewatchError) or the store could not take it."""

    def __init__(self, request: ActionRequest, problem: str) -> None:
        super().__init__()
        self.request = request
        self.problem = problem


class DetailArrived(Message):
    """A close-up's detail, read in a worker; `key` is the line's key it was read for."""

    def __init__(self, detail: view.CharacteristicView | None, key: tuple[object, ...] | None,
                 ) -> None:
        super().__init__()
        self.detail = detail
        self.key = key


class DetailUnread(Message):
    """A close-up's detail could not be read; the last one stays until the next change."""

    def __init__(self, problem: str) -> None:
        super().__init__()
        self.problem = problem
