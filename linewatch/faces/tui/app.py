"""The Textual face of linewatch: `LinewatchApp` and `run_app`, used by `watch` and by the tests.

Data flows one way. The monitor's `subscribe` callback (any thread) raises a flag and posts one
`LineChanged`; the app then starts a thread worker that reads the snapshot (SQLite and numpy,
never on the event loop) and posts it back as `LineArrived`, at most about ten times a second
and never two at once; the handler hands it to the screen on top. Keypresses that change the
store (acknowledge, shelve, new baseline) run in a worker too and post their outcome back. With
nothing arriving nothing runs: no timer polls, only the once-a-second clock.
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable
from typing import Any, ClassVar

from textual import events, on, work
from textual.app import App
from textual.binding import Binding, BindingType
from textual.notifications import SeverityLevel
from textual.screen import Screen
from textual.timer import Timer
from textual.worker import get_current_worker

from linewatch.domain import exit_codes
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible
from linewatch.faces.tui import messages
from linewatch.faces.tui.crash import FATAL, ErrorConsole, crash_words
from linewatch.faces.tui.glyphs import Glyphs, pick_glyphs
from linewatch.faces.tui.screens.base import LineScreen
from linewatch.faces.tui.screens.board import BoardScreen
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.queue import AlarmQueueScreen, sorted_alarms
from linewatch.present import view

EXIT_CRASH = exit_codes.CRASH  # the screen died on an internal error
REFRESH_HZ = 10.0  # pictures taken at most this often
REDRAW_SHARE = 0.1  # redrawing a new picture takes at most this share of the loop's time
KEY_QUIET = 0.3  # seconds after a key before a new picture is taken: keys come first...
LONGEST_WAIT = 2.0  # ...but no change waits longer than this for its picture
RETRY_AFTER = 2.0  # seconds before asking again for a snapshot that failed
BELL_PRIORITIES = (1, 2)  # a new unacknowledged alarm of these priorities rings the bell




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
        on_hang_up: Callable[[int], None] | None = None,
    ) -> None:
        """`on_hang_up(code)` runs when the terminal goes away, before the normal way out (the
        command line arms a last-resort exit there)."""
        super().__init__()
        self.source = source
        self.actions = actions
        self.on_hang_up = on_hang_up
        self.bell_enabled = bell
        self.clock = clock
        self.glyphs: Glyphs = pick_glyphs(ascii_only)
        self.title = visible(title)
        self.line = view.LineSnapshot(title=title)
        self.line_taken_at = clock()
        self._ordered: tuple[view.LineSnapshot, list[view.AlarmView]] | None = None
        self.bells_rung = 0
        self._changed = False  # the source moved on since the picture being taken or shown
        self._woken = False  # a LineChanged is on its way to the loop
        self._taking = False  # a snapshot worker is running
        self._last_pull = -1.0  # perf_counter when the last picture was asked for
        self._pull_timer: Timer | None = None
        self._changed_since: float | None = None  # perf_counter when a change began to wait
        self._last_key = -1.0  # perf_counter of the last key
        self._retry_at = 0.0  # no picture before this after one failed
        self._first_problem = ""  # why the first picture could not be read, told once mounted
        # alarm id -> (episodes, priority) in the last picture; None before the first
        self._alarms_seen: dict[int, tuple[int, int]] | None = None
        self._flooding = False
        self._drawing_since = 0.0
        self._quiet_until = 0.0  # the loop is left to keys until then after a redraw
        self.wanted_feed: str | None = None  # a file the feed pulse highlights when shown next
        # Textual's report of an error that ends the screen goes here, not over the terminal
        self.error_console: ErrorConsole = ErrorConsole()

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

    @property
    def crashed(self) -> bool:
        """True once an unhandled error ended the screen (the caller tells it in one line, see
        `exit_code`)."""
        return self.return_code == FATAL

    async def on_load(self) -> None:
        # before the terminal driver starts, so a hang-up at any later moment is handled
        self._leave_on_hangup()
        # the first picture, read in a worker like every other one; keys typed meanwhile wait
        # for it, so the first keypress acts on the line, not on an empty screen
        first: messages.LineArrived | messages.LineUnread | None = await self._take_line(
            post=False).wait()
        if isinstance(first, messages.LineArrived):
            self.line = first.line
            self.line_taken_at = self.clock()
            self._ring_for_new_alarms(first.line)
        elif isinstance(first, messages.LineUnread):
            self._first_problem = first.problem

    def on_mount(self) -> None:
        self.set_class(self.glyphs.ascii, "-ascii")
        self.source.subscribe(self._source_changed)
        if self._first_problem:
            self._line_unread(messages.LineUnread(self._first_problem))
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
        """Quit the normal way, after telling the caller (which arms its last-resort exit, in
        case the normal way hangs on a terminal that is gone)."""
        if self.on_hang_up is not None:
            self.on_hang_up(code)
        self.exit(code)

    def _source_changed(self, version: int) -> None:
        """Called from any thread: raise the flag and wake the loop once; it does the rest."""
        self._changed = True
        if not self._woken:
            self._woken = True
            self.post_message(messages.LineChanged())

    @on(messages.LineChanged)
    def _line_changed(self) -> None:
        self._woken = False
        self._schedule_pull()

    async def on_event(self, event: events.Event) -> None:
        if isinstance(event, events.Key):  # every key passes the app first
            self._last_key = time.perf_counter()
        await super().on_event(event)

    def _schedule_pull(self) -> None:
        """Take the next picture now, or when the pace allows: at most REFRESH_HZ, never while
        one is being taken, redraws taking at most REDRAW_SHARE of the loop, and not while
        the operator is pressing keys (KEY_QUIET) unless the change has waited LONGEST_WAIT."""
        if self._taking or self._pull_timer is not None or not self._changed:
            return
        now = time.perf_counter()
        if self._changed_since is None:
            self._changed_since = now
        pace = max(self._quiet_until, self._last_pull + 1.0 / REFRESH_HZ)
        calm = min(self._last_key + KEY_QUIET, self._changed_since + LONGEST_WAIT)
        due = max(pace, calm, self._retry_at) - now
        if due <= 0:
            self._pull_line()
        else:
            self._pull_timer = self.set_timer(due, self._pull_due)

    def _pull_due(self) -> None:
        self._pull_timer = None
        self._schedule_pull()

    def _pull_line(self) -> None:
        """Start reading a new picture in a worker thread."""
        self._changed = False
        self._changed_since = None
        self._taking = True
        self._last_pull = time.perf_counter()
        self._take_line()

    @work(thread=True, exclusive=True, group="snapshot")
    def _take_line(self, post: bool = True) -> messages.LineArrived | messages.LineUnread | None:
        """Read the picture (in a thread: it waits for SQLite and computes with numpy) and
        post it back. A store that is busy or gone is expected and told; anything else is a
        bug, which the app's crash handler takes."""
        try:
            outcome: messages.LineArrived | messages.LineUnread = messages.LineArrived(
                self.source.snapshot())
        except (LinewatchError, OSError) as exc:
            outcome = messages.LineUnread(messages.problem_words(exc))
        if get_current_worker().is_cancelled:
            return None
        if post:
            self.post_message(outcome)
        return outcome

    @on(messages.LineUnread)
    def _line_unread(self, message: messages.LineUnread) -> None:
        """Keep the last picture and ask again after a pause."""
        self._taking = False
        self._changed = True
        self._retry_at = time.perf_counter() + RETRY_AFTER
        self.notify(f"cannot read the line: {message.problem}", title="retrying",
                    severity="error", timeout=RETRY_AFTER)
        self._schedule_pull()

    @on(messages.LineArrived)
    def _line_arrived(self, message: messages.LineArrived) -> None:
        self._taking = False
        self._show_picture(message.line)
        self._schedule_pull()  # the source may have moved on while this one was read

    def _show_picture(self, line: view.LineSnapshot) -> None:
        """Make `line` the picture and redraw the screen on top."""
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
        """Leave the loop to keys long enough that redraws take at most REDRAW_SHARE of its
        time (a heavy line then redraws less often instead of queueing redraws behind the
        operator's keypresses), but never longer than LONGEST_WAIT."""
        now = time.perf_counter()
        took = now - self._drawing_since
        self._quiet_until = now + min(LONGEST_WAIT, took * (1.0 - REDRAW_SHARE) / REDRAW_SHARE)

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

    def request(self, request: messages.ActionRequest) -> None:
        """Ask the monitor for `request` in a worker thread (it writes to the store, which
        may be busy for a while); its outcome comes back as a message and is told on screen."""
        self._act(request)

    @work(thread=True, group="actions")
    def _act(self, request: messages.ActionRequest) -> None:
        """One action, in a thread. A refusal or a store that cannot take it is expected and
        told; anything else is a bug, which the app's crash handler takes."""
        try:
            result = getattr(self.actions, request.call)(*request.args)
        except (LinewatchError, OSError) as exc:
            self.post_message(messages.ActionRefused(request, messages.problem_words(exc)))
            return
        self.post_message(messages.ActionDone(request, result))

    @on(messages.ActionDone)
    def _action_done(self, message: messages.ActionDone) -> None:
        request = message.request
        if request.done is not None:
            self.notify(request.done(message.result))
        if request.then is not None:
            request.then(message.result)
        self._changed = True  # what was done shows in the next picture, without waiting
        self._schedule_pull()  # for the collector's notification

    @on(messages.ActionRefused)
    def _action_refused(self, message: messages.ActionRefused) -> None:
        self.notify(message.problem, title="not done", severity="error")


def run_app(
    source: view.SnapshotSource,
    actions: view.LineActions,
    *,
    bell: bool = True,
    title: str = "linewatch",
    on_hang_up: Callable[[int], None] | None = None,
) -> int:
    """Open the screen until the user quits; returns the exit code: 0, the signal's code after
    a hang-up, or EXIT_CRASH after an internal error, told on stderr in one line (the traceback
    goes to a file named there). `on_hang_up(code)`: see LinewatchApp."""
    app = LinewatchApp(source, actions, bell=bell, title=title, on_hang_up=on_hang_up)
    return exit_code(app, app.run())


def exit_code(app: LinewatchApp, code: int | None) -> int:
    """The code to leave with once `app` has stopped; a crash is told in one line on stderr
    (its traceback goes to a file named there); anything else Textual had to say is passed on."""
    report = app.error_console.text
    if app.crashed:
        sys.stderr.write(f"linewatch: the screen stopped on an internal error: "
                         f"{visible(crash_words(report))}\n")
        return EXIT_CRASH
    if report.strip():
        sys.stderr.write(visible(report.rstrip()) + "\n")
    return int(code or app.return_code or 0)
