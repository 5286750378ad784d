"""The plant link in words for the top line: "plant link down since 14:02, 37 entries waiting"
(nothing while it is up: a working link needs no attention)."""

from __future__ import annotations

import time

from linewatch.domain.words import count


def link_words(state: str | None, since: float | None, waiting: int) -> str:
    """What the top line says about the link; '' when it is up or there is none."""
    if state != "down" or since is None:
        return ""
    return (f"plant link down since {time.strftime('%H:%M', time.localtime(since))}, "
            f"{count(waiting, 'entry', 'entries')} waiting")
