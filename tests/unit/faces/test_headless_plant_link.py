"""The --no-ui text form of the plant link's state: one readable line, outside text escaped."""

from __future__ import annotations

import io

from linewatch.faces.headless import Printer


def test_link_down_and_up_read_as_lines() -> None:
    out = io.StringIO()
    printer = Printer("text", out)
    printer({"type": "plant-link", "state": "down", "since": "2026-03-02T14:02:00+00:00",
             "line": "line-3\x1b[2J", "problem": "cannot reach the plant database"})
    printer({"type": "plant-link", "state": "up", "since": "2026-03-02T14:03:00+00:00",
             "line": "line-3"})
    lines = out.getvalue().splitlines()
    assert lines == [
        "PLANT   line-3\\x1b[2J: link to the plant database down since "
        "2026-03-02T14:02:00+00:00: cannot reach the plant database (the line goes on "
        "monitoring)",
        "PLANT   line-3: link to the plant database up",
    ]
