"""Open the screen on the fixed invented line: `python -m tests.tui.fake_app [--ascii]`.

For looking at the screens by hand (e.g. with tui-shot); the tests build the same app directly.
"""

from __future__ import annotations

import sys

from linewatch.faces.tui.app import LinewatchApp

from .fake_line import FakeActions, FakeSource, fixed_clock


def build_app(ascii_only: bool = False) -> LinewatchApp:
    """The app over the fake line with the fixed clock and the bell off."""
    return LinewatchApp(FakeSource(), FakeActions(), bell=False, title="extrusion line 3",
                        clock=fixed_clock, ascii_only=ascii_only)


if __name__ == "__main__":
    app = build_app(ascii_only="--ascii" in sys.argv)
    app.run()
    for call in app.actions.calls:  # type: ignore[attr-defined]
        print(call)
