"""Names, file names, reasons and notes from outside are shown literally on every screen and
panel: never parsed as Rich/Textual markup (`[/]` once crashed the screen, `[bold red]` styled
it, `[link=...]` made a hyperlink) and never passed to the terminal as control characters.

Each hostile name is put everywhere a text from outside appears in the fake line, then the
Pilot walks board, close-up, new-baseline panel, queue, acknowledge, acknowledge-all and shelve
panels, feed pulse and help; after each step the whole rendered screen is searched.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import pytest
from textual.pilot import Pilot
from textual.widgets import Static

from linewatch.domain.safe_text import visible
from linewatch.faces.tui import app as ui_app
from linewatch.faces.tui.app import EXIT_CRASH, LinewatchApp, exit_code
from linewatch.faces.tui.screens.ack_panel import AckPanel
from linewatch.faces.tui.screens.board import BoardScreen
from linewatch.faces.tui.screens.close_up import CloseUpScreen
from linewatch.faces.tui.screens.feeds import FeedScreen
from linewatch.faces.tui.screens.keys_help import KeysHelp
from linewatch.faces.tui.screens.queue import AlarmQueueScreen
from linewatch.faces.tui.screens.restart_panel import RestartPanel
from linewatch.faces.tui.screens.shelve_panel import ShelvePanel
from linewatch.present import view

from .fake_line import NOW, FakeActions, FakeSource, build_snapshot, fixed_clock
from .waiting import settled

HOSTILE = [
    "[/]",
    "[bold red]x",
    "[link=https://example.invalid]x[/link]",
    "od\u001b]0;PWNED\u0007\u001b[2J",
]


def file_part(name: str) -> str:
    """`name` as one file name: a slash would make it a folder."""
    return name.replace("/", "_")


def hostile_line(name: str) -> view.LineSnapshot:
    """The fake line with `name` as the first characteristic, its unit, the line title, a feed
    file, a reason, a note, the acknowledging user, a rejected row and a reaction plan."""
    line = build_snapshot()
    first = line.characteristics[0]
    old = first.name
    first.name, first.unit = name, f"u{name}"
    feed = f"/srv/{file_part(name)}.csv"
    reasons = [f"r{name}", "tool wear"]
    alarms = [dataclasses.replace(a, characteristic=name, reasons=reasons,
                                  description=f"d{name}", reaction_plan=f"p{name}")
              if a.characteristic == old else a for a in line.alarms]
    alarms.insert(0, view.AlarmView(
        id=99, kind="beyond-limits", characteristic=name, chart="xbar", rule="we1",
        description=f"d{name}", state=view.UNACKNOWLEDGED, priority=1, raised_at=NOW - 5,
        reasons=reasons, first_index=46, last_index=47, reaction_plan=f"p{name}",
        acknowledged_by=f"a{name}", reason=f"r{name}", note=f"n{name}"))
    alarms.append(view.AlarmView(
        id=98, kind="feed-health", characteristic=feed, chart="", rule="stale",
        description="no new row", state=view.UNACKNOWLEDGED, priority=4, raised_at=NOW - 50,
        reasons=reasons))
    feeds = [view.FeedView(feed, rows=10, rejected=1, last_rejects=[f"line 3: {name}"]),
             *line.feeds]
    return dataclasses.replace(line, title=f"t{name}", alarms=alarms, feeds=feeds)


def screen_text(app: LinewatchApp) -> tuple[str, list[str]]:
    """Everything on the screen as text, and any hyperlinks its segments carry."""
    strips = app.screen._compositor.render_strips()  # what the terminal is sent, cell by cell
    segments = [seg for strip in strips for seg in strip]
    links = [seg.style.link for seg in segments if seg.style and seg.style.link]
    return "\n".join("".join(seg.text for seg in strip) for strip in strips), links


def assert_shown(app: LinewatchApp, *literal: str) -> None:
    text, links = screen_text(app)
    controls = [c for c in text if (ord(c) < 0x20 and c != "\n") or 0x7F <= ord(c) <= 0x9F]
    assert controls == []
    assert links == []
    for want in literal:
        assert want in text, f"{want!r} not on {type(app.screen).__name__}:\n{text}"


def panel_title(app: LinewatchApp) -> str:
    """The plain text of the open panel's title (it may wrap over several screen lines)."""
    return str(app.screen.query_one(".panel-title", Static).render())


def assert_notified(app: LinewatchApp, literal: str) -> None:
    """The newest message says `literal`, shown as plain text (a toast is drawn later)."""
    last = list(app._notifications)[-1]
    assert literal in last.message and not last.markup
    assert [c for c in last.message if ord(c) < 0x20 or 0x7F <= ord(c) <= 0x9F] == []


async def settle(pilot: Pilot[int]) -> None:
    await settled(pilot)
    await pilot.pause()


@pytest.mark.parametrize("name", HOSTILE)
async def test_hostile_names_are_shown_literally_on_every_screen(name: str) -> None:
    source = FakeSource(picture=hostile_line(name))
    actions = FakeActions()
    app = LinewatchApp(source, actions, bell=False, title=f"t{name}", clock=fixed_clock,
                       ascii_only=False)
    shown = visible(name)
    async with app.run_test(size=(160, 48)) as pilot:
        await settle(pilot)
        assert isinstance(app.screen, BoardScreen)
        assert_shown(app, f"t{shown}", shown[:8])  # the title, the name (maybe cut short)

        await pilot.press("enter")  # the hostile characteristic is the first row
        await settle(pilot)
        assert isinstance(app.screen, CloseUpScreen)
        assert_shown(app, f"close-up {shown} [u{shown}]", f"d{shown}")

        await pilot.press("n")
        await settle(pilot)
        assert isinstance(app.screen, RestartPanel)
        assert_shown(app)
        assert panel_title(app).startswith(f"New baseline for {shown}:")
        await pilot.press(*"die", "enter")
        await settle(pilot)
        assert actions.calls[-1] == ("new_baseline", (name, 47, "die"))
        assert_notified(app, f"new baseline for {shown} from subgroup 47")

        await pilot.press("escape", "a")
        await settle(pilot)
        assert isinstance(app.screen, AlarmQueueScreen)
        assert_shown(app, f"#99 {shown}", f"a{shown}", f"r{shown}", f"n{shown}", f"p{shown}")

        await pilot.press("enter")
        await settle(pilot)
        assert isinstance(app.screen, AckPanel)
        assert_shown(app, f"1 r{shown}")
        assert panel_title(app) == f"Acknowledge alarm #99 {shown}: d{shown}"
        await pilot.press("1")
        await settle(pilot)
        assert_shown(app, f"reason: r{shown}")
        await pilot.press("enter")
        await settle(pilot)
        assert actions.calls[-1] == ("acknowledge", ([99], f"r{name}", ""))
        assert_notified(app, f"alarm #99 acknowledged: r{shown}")

        await pilot.press("K")
        await settle(pilot)
        assert isinstance(app.screen, AckPanel)
        await pilot.press("1", "enter")
        await settle(pilot)
        assert actions.calls[-1] == ("acknowledge_characteristic", (name, f"r{name}", ""))
        assert_notified(app, f"alarms of {shown} acknowledged: r{shown}")

        await pilot.press("s")
        await settle(pilot)
        assert isinstance(app.screen, ShelvePanel)
        assert_shown(app)
        assert panel_title(app) == f"Shelve alarm #99 {shown}: d{shown}"
        await pilot.press("escape", "c")
        await settle(pilot)
        assert isinstance(app.screen, CloseUpScreen)
        assert_shown(app, f"close-up {shown}")

        await pilot.press("escape", "f")
        await settle(pilot)
        assert isinstance(app.screen, FeedScreen)
        assert_shown(app, f"/srv/{visible(file_part(name))}.csv", f"line 3: {shown}")

        await pilot.press("question_mark")
        await settle(pilot)
        assert isinstance(app.screen, KeysHelp)
        assert_shown(app)
        await pilot.press("escape")
        await settle(pilot)

    assert not app.crashed


async def test_a_feed_alarm_on_a_hostile_file_is_shown_literally_in_the_queue() -> None:
    name = "[bold red]R.csv"
    source = FakeSource(picture=hostile_line(name))
    app = LinewatchApp(source, FakeActions(), bell=False, clock=fixed_clock, ascii_only=False)
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.press("f")
        await settle(pilot)
        assert_shown(app, name)


class CrashingApp(LinewatchApp):
    """The app with a fault planted in its start-up, standing in for any unexpected error."""

    CSS_PATH = str(Path(ui_app.__file__).with_name("linewatch.tcss"))  # relative to the app

    def on_mount(self) -> None:
        super().on_mount()
        raise RuntimeError("planted fault \u001b]0;X\u0007")


def test_a_crash_of_the_screen_exits_non_zero_with_one_line(
    capsys: pytest.CaptureFixture[str],
) -> None:
    app = CrashingApp(FakeSource(), FakeActions(), bell=False, clock=fixed_clock)
    code = exit_code(app, app.run(headless=True, size=(80, 24)))
    err = capsys.readouterr().err
    assert code == EXIT_CRASH != 0
    assert err.count("\n") == 1, err  # no full-screen traceback
    # the error as the traceback states it (rich leaves the BEL out), escaped
    assert err.startswith("linewatch: the screen stopped on an internal error: RuntimeError: "
                          "planted fault \\x1b]0;X (traceback in ")
    assert not any(ord(ch) < 32 for ch in err[:-1])
    written = Path(err.rsplit("traceback in ", 1)[1].rstrip(")\n"))
    assert "planted fault" in written.read_text()
    written.unlink()


def attribute_line(name: str) -> view.LineSnapshot:
    """The fake line with a pass/fail characteristic named `name` in front: a p chart whose
    limits step with each sample's size, the newest sample beyond its limit."""
    line = build_snapshot()
    sizes = [40.0, 48.0, 44.0, 50.0, 46.0, 42.0] * 5
    fails = [2, 1, 3, 2, 1, 2] * 5
    fails[-1] = 14
    pbar = 0.04
    values = [d / n for d, n in zip(fails, sizes, strict=True)]
    chart = view.ChartView("p", values, list(range(len(values))),
                           [""] * (len(values) - 1) + ["we1"], steps=True, sizes=sizes)
    for k, n in enumerate(sizes):  # pbar ± 3 sqrt(pbar (1 - pbar) / n) (Montgomery, p chart)
        s = (pbar * (1 - pbar) / n) ** 0.5
        chart.phase_limits.append((k, pbar, pbar + 3 * s, max(0.0, pbar - 3 * s), s))
    chart.center, chart.ucl, chart.lcl, chart.sigma = chart.phase_limits[-1][1:]
    last_ucl = chart.phase_limits[-1][2]
    cv = view.CharacteristicView(
        name=name, state=view.STATE_ALARM, points=sum(int(n) for n in sizes),
        last_value=values[-1], decimals=4, location=chart, open_alarms=1,
        attribute=view.AttributeFigures(
            "p", "proportion nonconforming", values[-1], pbar, last_ucl, 0.0, overall=0.05,
            lower95=0.04, upper95=0.06, ppm=50_000, events=64, exposure=1350.0,
            not_applicable="Cp and Cpk do not apply to attribute data"))
    return dataclasses.replace(line, characteristics=[cv, *line.characteristics])


@pytest.mark.parametrize("size", [(80, 24), (160, 48)])
@pytest.mark.parametrize("name", HOSTILE)
async def test_a_hostile_attribute_characteristic_is_shown_literally(name: str, size) -> None:
    source = FakeSource(picture=attribute_line(name))
    app = LinewatchApp(source, FakeActions(), bell=False, title="t", clock=fixed_clock,
                       ascii_only=False)
    shown = visible(name)
    async with app.run_test(size=size) as pilot:
        await settle(pilot)
        assert isinstance(app.screen, BoardScreen)
        assert_shown(app, shown[:8], "33.3% UCL")  # 14 of 42 against its own limit
        await pilot.press("enter")
        await settle(pilot)
        assert isinstance(app.screen, CloseUpScreen)
        assert_shown(app, f"close-up {shown}", "(n 42)")
        if size[1] >= 48:  # the figures sit beside the charts
            assert_shown(app, "proportion nonconforming overall", "do not apply")
    assert not app.crashed
