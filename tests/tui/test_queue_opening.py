"""Opening the alarm queue does no work twice: its order is the one definition whatever the
input order, the footer keeps its keys when a view is shown again, the queue is built before
the first `a`, and the screen remembers only the alarms of the picture it shows."""

from __future__ import annotations

import dataclasses

from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.screens.queue import AlarmQueueScreen, sorted_alarms
from linewatch.faces.tui.widgets.key_footer import KeyCap, KeyFooter
from linewatch.present import view

from .fake_line import NOW, FakeSource

STATES = [view.UNACKNOWLEDGED, view.ACKNOWLEDGED, view.RETURNED_UNACKNOWLEDGED, view.SHELVED,
          view.NORMAL]


def alarm(i: int, state: str, priority: int, raised_at: float) -> view.AlarmView:
    return view.AlarmView(id=i, kind="run-rule", characteristic="outer-diameter", chart="xbar",
                          rule="we2", description="2 of 3 beyond 2 sigma", state=state,
                          priority=priority, raised_at=raised_at)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.sampled_from(STATES), st.integers(1, 4),
                          st.sampled_from([NOW, NOW - 1, NOW - 60, NOW - 3600])), max_size=40),
       st.randoms())
def test_queue_order_is_state_then_priority_then_newest_for_any_input_order(
    spec: list[tuple[str, int, float]], rnd: object
) -> None:
    alarms = [alarm(i, s, p, t) for i, (s, p, t) in enumerate(spec)]
    rnd.shuffle(alarms)  # type: ignore[attr-defined]
    # the rule written out as one key (common practice for an alarm list: open alarms first,
    # then shelved, then closed; most urgent priority, newest first; ties by the newer id)
    wanted = sorted(alarms, key=lambda a: (a.state == view.NORMAL, a.state == view.SHELVED,
                                           a.priority, -a.raised_at, -a.id))
    assert [a.id for a in sorted_alarms(alarms)] == [a.id for a in wanted]


async def test_the_queue_is_built_before_the_first_key_and_its_footer_kept(
    app: LinewatchApp,
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause(0.3)
        built = [s for s in app._screen_stacks.get("alarms", [])]
        assert len(built) == 1 and isinstance(built[0], AlarmQueueScreen) and built[0].ready
        await pilot.press("a")
        await pilot.pause()
        assert app.screen is built[0]
        keys = list(app.screen.query_one(KeyFooter).query(KeyCap))
        shown = [k.action for k in keys]
        assert "show('alarms')" not in shown and "show('board')" in shown  # where you are
        await pilot.press("b")
        await pilot.pause()
        await pilot.press("a")
        await pilot.pause()
        again = list(app.screen.query_one(KeyFooter).query(KeyCap))
        assert again == keys and all(a is b for a, b in zip(again, keys, strict=True))


async def test_the_bell_remembers_only_the_alarms_of_the_picture_shown(
    app: LinewatchApp, source: FakeSource
) -> None:
    async with app.run_test(size=(80, 24)) as pilot:
        await pilot.pause()
        for version in range(60, 66):  # each picture: a different set of alarms
            alarms = [alarm(10 * version + k, view.UNACKNOWLEDGED, 3, NOW) for k in range(5)]
            source.publish(dataclasses.replace(source.picture, version=version, alarms=alarms))
            await pilot.pause(0.25)
            assert app.line.version == version
        assert set(app._alarms_seen or {}) == {a.id for a in app.line.alarms}
