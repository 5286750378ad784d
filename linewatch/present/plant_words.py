"""The plant link in words for the top line: "plant link down since 14:02, 37 entries waiting",
or in short for a narrow terminal "link down 14:02, 37 waiting" (nothing while it is up: a
working link needs no attention)."""

from __future__ import annotations

import time

from linewatch.domain.words import count


def link_words(down_since: float | None, waiting: int, short: bool = False) -> str:
    """What the top line says about the link; '' when it is up or there is none."""
    if down_since is None:
        return ""
    at = time.strftime("%H:%M", time.localtime(down_since))
    if short:
        return f"link down {at}, {waiting} waiting"
    return f"plant link down since {at}, {count(waiting, 'entry', 'entries')} waiting"
