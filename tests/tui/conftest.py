"""Fixtures that pin what makes screen tests flaky: time zone, clock, size, bell, data."""

from __future__ import annotations

import os
import time
from collections.abc import Iterator

import pytest

from linewatch.faces.tui.app import LinewatchApp

from .fake_line import FakeActions, FakeSource, fixed_clock


@pytest.fixture(autouse=True)
def utc(monkeypatch: pytest.MonkeyPatch) -> Iterator[None]:
    """Alarm times are shown in local time; pin it so pictures agree on every machine."""
    monkeypatch.setenv("TZ", "UTC")
    monkeypatch.delenv("LINEWATCH_ASCII", raising=False)
    time.tzset()
    yield
    monkeypatch.undo()
    time.tzset()


@pytest.fixture
def source() -> FakeSource:
    return FakeSource()


@pytest.fixture
def actions() -> FakeActions:
    return FakeActions()


@pytest.fixture
def app(source: FakeSource, actions: FakeActions) -> LinewatchApp:
    return LinewatchApp(source, actions, bell=False, title="extrusion line 3",
                        clock=fixed_clock, ascii_only=False)


def make_app(ascii_only: bool = False) -> LinewatchApp:
    """A fresh app over the fake line (for snapshot tests, which want an unstarted app)."""
    os.environ.setdefault("TZ", "UTC")
    return LinewatchApp(FakeSource(), FakeActions(), bell=False, title="extrusion line 3",
                        clock=fixed_clock, ascii_only=ascii_only)
