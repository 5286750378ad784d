"""The screen keeps answering keys while the store is slow: pictures, close-up details and
actions are read and written in worker threads, never on the event loop."""

from __future__ import annotations

import threading
from pathlib import Path

import pytest
from textual.worker import WorkerFailed

from linewatch.faces.tui.app import EXIT_CRASH, LinewatchApp, exit_code
from linewatch.present import view

from .fake_line import FakeActions, FakeSource, build_snapshot, fixed_clock
from .waiting import settled, until

HOLD = 20.0  # seconds a stuck call would block the test for (it is released long before)


class StuckSource(FakeSource):
    """A source whose store stops answering once `stuck` is set, until `released`."""

    def __init__(self) -> None:
        super().__init__()
        self.stuck = threading.Event()
        self.released = threading.Event()
        self.waiting = threading.Event()  # a read is blocked now
        self.finished = threading.Event()  # a blocked read came back

    def _maybe_block(self) -> None:
        if self.stuck.is_set():
            self.waiting.set()
            self.released.wait(HOLD)
            self.finished.set()

    def snapshot(self) -> view.LineSnapshot:
        self._maybe_block()
        return super().snapshot()

    def detail(self, characteristic: str) -> view.CharacteristicView | None:
        self._maybe_block()
        return super().detail(characteristic)


class StuckActions(FakeActions):
    """Actions whose store write hangs until `released`."""

    def __init__(self) -> None:
        super().__init__()
        self.released = threading.Event()
        self.waiting = threading.Event()
        self.finished = threading.Event()

    def acknowledge(self, alarm_ids: list[int], reason: str, note: str = "") -> None:
        self.waiting.set()
        self.released.wait(HOLD)
        self.finished.set()
        super().acknowledge(alarm_ids, reason, note)


def newer(version: int) -> view.LineSnapshot:
    line = build_snapshot()
    line.version = version
    return line


async def test_keys_are_answered_while_a_picture_is_being_read() -> None:
    source = StuckSource()
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        source.stuck.set()
        source.publish(newer(2))
        await until(source.waiting.is_set)  # the next picture is being read, and hangs
        await pilot.press("a")
        assert app.current_mode == "alarms"
        await pilot.press("b")
        assert app.current_mode == "board"
        assert not source.finished.is_set()  # the keys were answered while the read hung
        source.released.set()
        await until(lambda: app.line.version == 2)


async def test_keys_are_answered_while_a_close_up_reads_its_detail() -> None:
    source = StuckSource()
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("enter")  # the close-up of outer-diameter, read while not stuck
        await settled(pilot)
        source.stuck.set()
        line = newer(2)
        line.characteristics[0].points += 1  # its own row moved: its detail is read again
        source.publish(line)
        await until(source.waiting.is_set)
        await pilot.press("a")
        assert app.current_mode == "alarms"
        assert not source.finished.is_set()
        source.released.set()


async def test_keys_are_answered_while_an_acknowledgement_is_being_written() -> None:
    actions = StuckActions()
    app = LinewatchApp(FakeSource(), actions, bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("a", "enter", "1", "enter")
        await until(actions.waiting.is_set)  # the store takes its time
        await pilot.press("b")
        assert app.current_mode == "board"
        assert not actions.finished.is_set()
        assert actions.calls == []  # not written yet, and the screen does not pretend it was
        actions.released.set()
        await until(lambda: actions.calls == [("acknowledge", ([7], "tool wear", ""))])
        await until(lambda: any("acknowledged: tool wear" in n.message
                                for n in app._notifications))


async def test_a_fault_in_a_worker_takes_the_screen_down_as_a_crash(
    capsys: pytest.CaptureFixture[str],
) -> None:
    """Only the store's expected failures are caught; a bug in reading the line is not hidden
    behind a notification but ends the screen with the crash code."""

    class BrokenSource(FakeSource):
        broken = False

        def snapshot(self) -> view.LineSnapshot:
            if self.broken:
                raise KeyError("planted bug")
            return super().snapshot()

    source = BrokenSource()
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    with pytest.raises(WorkerFailed):  # the test driver re-raises what took the app down
        async with app.run_test(size=(80, 24)) as pilot:
            await pilot.pause()
            source.broken = True
            source.publish(newer(2))
            await until(lambda: app.crashed)
    assert exit_code(app, None) == EXIT_CRASH
    err = capsys.readouterr().err
    # told as itself, not as the worker's wrapper
    assert "internal error: KeyError: 'planted bug' (traceback in " in err
    Path(err.rsplit("traceback in ", 1)[1].rstrip(")\n")).unlink()
