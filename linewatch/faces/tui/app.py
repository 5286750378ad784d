"""The Textual face of linewatch: `LinewatchApp` and `run_app`, used by `watch` and by the tests.

Data flows one way. The monitor's `subscribe` callback (any thread) only raises a flag; a timer
on the UI thread (about 10 Hz) takes one snapshot when the flag is up and hands it to the screen
on top. With nothing arriving the timer finds the flag down and nothing redraws.
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from typing import Any, ClassVar

from textual.app import App
from textual.binding import Binding, BindingType
from textual.notifications import SeverityLevel
from textual.screen import Screen

from linewatch.domain import exit_codes
from linewatch.domain.safe_text import visible
from linewatch.faces.tui.glyphs import Glyphs, pick_glyphs
from linewatch.faces.tui.screens.base import LineScreen
from linewatch.faces.tui.screens.board import BoardScreen
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.queue import AlarmQueueScreen, sorted_alarms
from linewatch.present import view

EXIT_CRASH = exit_codes.CRASH  # the screen died on an internal error
REFRESH_HZ = 10.0
RETRY_AFTER = 2.0  # seconds before asking again for a snapshot that failed
BELL_PRIORITIES = (1, 2)  # a new unacknowledged alarm of these priorities rings the bell


HANGUP_GRACE = 5.0  # seconds the normal way out may take after a hang-up


class LinewatchApp(App[int]):
    """Line board, alarm queue, feed pulse and close-ups over one SnapshotSource."""

    CSS_PATH = "linewatch.tcss"
    ENABLE_COMMAND_PALETTE = False
    MODES: ClassVar[dict[str, str | Callable[[], Screen[Any]]]] = {
        "board": BoardScreen,
        "alarms": AlarmQueueScreen,
        "feeds": FeedScreen,
    }
    DEFAULT_MODE = "board"
    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("b", "show('board')", "Board", tooltip="the line board: every characteristic"),
        Binding("a", "show('alarms')", "Alarms", tooltip="the alarm queue"),
        Binding("f", "show('feeds')", "Feeds", tooltip="feed pulse: files followed"),
        Binding("question_mark", "keys_help", "Keys", key_display="?",
                tooltip="every key, glyph and colour explained"),
        Binding("q", "leave", "Quit", tooltip="quit (asks only if an acknowledgement is open)"),
        Binding("ctrl+q", "leave", "Quit", show=False, priority=True,
                tooltip="quit from anywhere, even while typing in a field"),
    ]

    def __init__(
        self,
        source: view.SnapshotSource,
        actions: view.LineActions,
        *,
        bell: bool = True,
        title: str = "linewatch",
        clock: Callable[[], float] = time.time,
        ascii_only: bool | None = None,
    ) -> None:
        super().__init__()
        self.source = source
        self.actions = actions
        self.bell_enabled = bell
        self.clock = clock
        self.glyphs: Glyphs = pick_glyphs(ascii_only)
        self.title = visible(title)
        self.line = view.LineSnapshot(title=title)
        self.line_taken_at = clock()
        self._ordered: tuple[view.LineSnapshot, list[view.AlarmView]] | None = None
        self.bells_rung = 0
        self._changed = True
        # alarm id -> (episodes, priority) in the last picture; None before the first
        self._alarms_seen: dict[int, tuple[int, int]] | None = None
        self._flooding = False
        self._drawing_since = 0.0
        self._quiet_until = 0.0
        self.wanted_feed: str | None = None  # a file the feed pulse highlights when shown next
        self.crashed_with: BaseException | None = None  # what took the screen down, if anything

    def get_key_display(self, binding: Binding) -> str:
        """Plain key names on the Linux console, which lacks Textual's key symbols."""
        shown = super().get_key_display(binding)
        if self.glyphs.ascii and not shown.isascii():
            return binding.key.replace("_", " ").title()
        return shown

    def notify(
        self,
        message: str,
        *,
        title: str = "",
        severity: SeverityLevel = "information",
        timeout: float | None = None,
        markup: bool = True,
    ) -> None:
        """Every message on screen names things from outside (characteristics, files,
        reasons, error texts): shown literally, never as markup, control characters
        escaped. (`markup` is accepted for the signature and ignored.)"""
        super().notify(visible(message), title=visible(title), severity=severity,
                       timeout=timeout, markup=False)

    def _handle_exception(self, error: Exception) -> None:
        """A crash ends the screen with a non-zero code; the caller prints one line instead
        of a full-screen traceback (see `run_app`)."""
        self.crashed_with = error
        super()._handle_exception(error)
        self._exit_renderables.clear()

    def on_load(self) -> None:
        # before the terminal driver starts, so a hang-up at any later moment is handled
        self._leave_on_hangup()

    def on_mount(self) -> None:
        self.set_class(self.glyphs.ascii, "-ascii")
        self.source.subscribe(self._source_changed)
        self._pull_line()
        self.set_interval(1.0 / REFRESH_HZ, self._refresh_if_changed)
        self.set_interval(1.0, self._tick_clock)
        self.call_after_refresh(self._prepare_queue)

    def _leave_on_hangup(self) -> None:
        """A closed terminal or SSH session (SIGHUP) or a SIGTERM quits the screen the normal
        way, so the terminal driver's threads stop and the caller's clean-up runs; otherwise
        the process would linger, reading a terminal that is gone."""
        import asyncio
        import signal

        try:
            loop = asyncio.get_running_loop()
            for sig in (signal.SIGHUP, signal.SIGTERM):
                loop.add_signal_handler(sig, self._hang_up, 128 + sig)
        except (NotImplementedError, RuntimeError, ValueError, AttributeError):
            pass  # no such signals here, or not the main thread (tests): nothing to hang up

    def _hang_up(self, code: int) -> None:
        """Quit the normal way; should that hang on a terminal that is gone, the clean-ups the
        caller registered still run after a grace period and the process ends."""
        from linewatch.runtime.exiting import exit_later

        exit_later(code, HANGUP_GRACE)
        self.exit(code)

    def _source_changed(self, version: int) -> None:
        """Called from any thread: only raise the flag; the timer does the rest."""
        self._changed = True

    def _refresh_if_changed(self) -> None:
        if self._changed and time.perf_counter() >= self._quiet_until:
            self._pull_line()

    def _pull_line(self) -> None:
        self._changed = False
        try:
            line = self.source.snapshot()
        except Exception as exc:  # a busy or vanished store must not take the screen down
            self._changed = True
            self._quiet_until = time.perf_counter() + RETRY_AFTER
            self.notify(f"cannot read the line: {exc}", title="retrying", severity="error",
                        timeout=RETRY_AFTER)
            return
        if line is self.line or (line.version == self.line.version and line.version != 0):
            return  # nothing new: keep the picture and the moment it was taken
        self.line = line
        self.line_taken_at = self.clock()
        self._ring_for_new_alarms(line)
        top = self.top_line_screen()
        if top is not None:
            self._drawing_since = time.perf_counter()
            top.redraw()
            self.call_after_refresh(self._drawn)

    def _drawn(self) -> None:
        """Leave the loop at least as long for keys as the last redraw took (a heavy line then
        redraws less often instead of queueing redraws behind the operator's keypresses)."""
        now = time.perf_counter()
        self._quiet_until = now + (now - self._drawing_since)

    def _ring_for_new_alarms(self, line: view.LineSnapshot) -> None:
        """Ring for an urgent alarm raised, re-raised (a new episode) or escalated since the
        last picture; during a flood, ring once when it begins and not for each alarm."""
        seen = {a.id: (a.episodes, a.priority) for a in line.alarms}
        flooding = line.flood is not None
        if self._alarms_seen is not None and self.bell_enabled:
            def news(a: view.AlarmView) -> bool:
                before = self._alarms_seen.get(a.id) if self._alarms_seen else None
                return before is None or a.episodes > before[0] or a.priority < before[1]

            loud = [a for a in line.alarms
                    if a.priority in BELL_PRIORITIES and a.state == view.UNACKNOWLEDGED
                    and news(a)]
            if (flooding and not self._flooding) or (loud and not flooding):
                self.bells_rung += 1
                self.bell()
        self._flooding = flooding
        # only this picture's alarms: a closed alarm never comes back under its id (its next
        # episode opens a new one), so remembering every alarm of the shift would only grow
        self._alarms_seen = seen

    def _tick_clock(self) -> None:
        top = self.top_line_screen()
        if top is not None and top.drawable:
            top.tick_clock()

    def top_line_screen(self) -> LineScreen | None:
        """The screen that shows the line now (a dialog may sit above it)."""
        for screen in reversed(self.screen_stack):
            if isinstance(screen, LineScreen):
                return screen
        return None

    def alarms_in_order(self) -> list[view.AlarmView]:
        """The current picture's alarms in queue order (`sorted_alarms`), sorted once per
        picture: the queue, the board's side list and the close-up each want it on every
        redraw. The list is shared: read it, never change it."""
        if self._ordered is None or self._ordered[0] is not self.line:
            self._ordered = (self.line, sorted_alarms(self.line.alarms))
        return self._ordered[1]

    def age_now(self, age: float | None) -> float | None:
        """A snapshot's age moved on to now, so a silent feed keeps getting older on screen."""
        if age is None:
            return None
        return age + max(0.0, self.clock() - self.line_taken_at)

    def _prepare_queue(self, visit: int = 1) -> None:
        """Build the alarm queue while the board is up, before anyone asks for it. A screen's
        first showing composes its widgets and runs Textual's style pass over the whole app
        twice (tens of milliseconds, more under load); paid here, the operator's first `a`
        only switches to a queue that is already built. The first visit builds and mounts it,
        the second (once it is mounted) lets Textual bring its styles up to date. Each visit
        switches there and straight back in one go, so no frame shows it; it is given up
        once the operator has left the board."""
        if not self.is_running or self.current_mode != "board" or len(self.screen_stack) > 1:
            return
        self.switch_mode("alarms")
        self.switch_mode("board")
        if visit == 1:
            self.call_after_refresh(self._prepare_queue, 2)

    def action_show(self, mode: str) -> None:
        """Go to one of the three main views, leaving close-ups and dialogs of the others."""
        if self.current_mode != mode:
            self.switch_mode(mode)
            top = self.top_line_screen()
            if top is not None and top.drawn_version != self.line.version:
                top.redraw()  # now, so the first frame is of this picture, not the last one
            return
        while len(self.screen_stack) > 1:  # already in that view: back to its own screen
            self.pop_screen()

    def action_keys_help(self) -> None:
        from linewatch.faces.tui.screens.keys_help import KeysHelp

        if not isinstance(self.screen, KeysHelp):
            self.push_screen(KeysHelp())

    def action_leave(self) -> None:
        """Quit at once, unless an acknowledgement is half typed: then ask first."""
        from linewatch.faces.tui.screens.ack_panel import AckPanel
        from linewatch.faces.tui.screens.confirm_leave import ConfirmLeave

        if isinstance(self.screen, ConfirmLeave):
            return
        if any(isinstance(s, AckPanel) and s.half_typed for s in self.screen_stack):
            self.push_screen(ConfirmLeave(), self._leave_if_confirmed)
            return
        self.exit(0)

    def _leave_if_confirmed(self, leave: bool | None) -> None:
        if leave:
            self.exit(0)


def run_app(
    source: view.SnapshotSource,
    actions: view.LineActions,
    *,
    bell: bool = True,
    title: str = "linewatch",
) -> int:
    """Open the screen until the user quits; returns the exit code: 0, the signal's code after
    a hang-up, or EXIT_CRASH after an internal error, told on stderr in one line (the traceback
    goes to a file named there)."""
    app = LinewatchApp(source, actions, bell=bell, title=title)
    return exit_code(app, app.run())


def exit_code(app: LinewatchApp, code: int | None) -> int:
    """The code to leave with once `app` has stopped; a crash is told in one line on stderr."""
    if app.crashed_with is not None:
        sys.stderr.write(f"linewatch: the screen stopped on an internal error: "
                         f"{visible(crash_words(app.crashed_with))}\n")
        return EXIT_CRASH
    return int(code or app.return_code or 0)


def crash_words(error: BaseException) -> str:
    """`Type: message` of a crash, and where its full traceback was written for a bug report."""
    import tempfile
    import traceback

    words = f"{type(error).__name__}: {error}"
    try:
        with tempfile.NamedTemporaryFile("w", prefix="linewatch-crash-", suffix=".txt",
                                         delete=False, encoding="utf-8") as f:
            f.write("".join(traceback.format_exception(error)))
        return f"{words} (traceback in {f.name})"
    except OSError:
        return words
