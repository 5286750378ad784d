"""Plain-ASCII glyphs that cannot be misread."""

from __future__ import annotations

import re

import pytest

from linewatch import view
from linewatch.ui.glyphs import ASCII, UNICODE
from linewatch.ui.widgets.margin_gauge import margin_text


@pytest.mark.parametrize("margin", [0.4, 4.04, 12.3, 99.6])
def test_the_ascii_sigma_does_not_read_as_seconds(margin: float) -> None:
    cv = view.CharacteristicView(name="x", margin_sigma=margin)
    shown = margin_text(cv, ASCII)
    assert len(shown) == 5 == len(margin_text(cv, UNICODE))
    assert not re.search(r"\d\s*s$", shown)  # "4.0s" beside the age column reads as 4 seconds
    assert shown.endswith("sd") and float(shown[:-2]) == pytest.approx(margin, abs=0.5)
