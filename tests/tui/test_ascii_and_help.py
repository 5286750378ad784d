"""Plain-ASCII glyphs that cannot be misread, and a help screen whose glyphs never pose as the
panel's border."""

from __future__ import annotations

import io
import re

import pytest
from rich.console import Console
from textual.widgets import Static

from linewatch.faces.tui.app import LinewatchApp
from linewatch.faces.tui.glyphs import ASCII, UNICODE
from linewatch.faces.tui.widgets.margin_gauge import margin_text
from linewatch.present import view

from .fake_line import FakeActions, FakeSource, fixed_clock


@pytest.mark.parametrize("margin", [0.4, 4.04, 12.3, 99.6])
def test_the_ascii_sigma_does_not_read_as_seconds(margin: float) -> None:
    cv = view.CharacteristicView(name="x", margin_sigma=margin)
    shown = margin_text(cv, ASCII)
    assert len(shown) == 5 == len(margin_text(cv, UNICODE))
    assert not re.search(r"\d\s*s$", shown)  # "4.0s" beside the age column reads as 4 seconds
    assert shown.endswith("sd") and float(shown[:-2]) == pytest.approx(margin, abs=0.5)


@pytest.mark.parametrize("ascii_only", [False, True], ids=["unicode", "ascii"])
@pytest.mark.parametrize("size", [(80, 24), (100, 30), (160, 48)], ids=lambda s: f"{s[0]}")
async def test_the_phase_glyph_never_ends_a_help_line(size: tuple[int, int],
                                                       ascii_only: bool) -> None:
    app = LinewatchApp(FakeSource(), FakeActions(), bell=False, title="line", clock=fixed_clock,
                       ascii_only=ascii_only)
    phase = (ASCII if ascii_only else UNICODE).phase
    async with app.run_test(size=size) as pilot:
        await pilot.press("question_mark")
        await pilot.pause()
        help_text = app.screen.query_one("#help-text", Static)
        width = help_text.content_size.width
        console = Console(width=width, file=io.StringIO(), color_system=None)
        console.print(help_text.content)
        lines = console.file.getvalue().splitlines()  # type: ignore[attr-defined]
    assert any(phase in line for line in lines)
    for line in lines:
        stripped = line.strip()
        assert not stripped.endswith(phase) and not stripped.startswith(phase), line


async def test_the_ascii_help_writes_sigma_as_the_board_does() -> None:
    app = LinewatchApp(FakeSource(), FakeActions(), bell=False, title="line", clock=fixed_clock,
                       ascii_only=True)
    async with app.run_test(size=(100, 30)) as pilot:
        await pilot.press("question_mark")
        await pilot.pause()
        help_text = app.screen.query_one("#help-text", Static)
        console = Console(width=100, file=io.StringIO(), color_system=None)
        console.print(help_text.content)
        shown = console.file.getvalue()  # type: ignore[attr-defined]
    margin = shown[shown.index("spec margin"):]
    assert "3sd" in margin and "σ" not in margin[:200]
