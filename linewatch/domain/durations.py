"""Parse and show durations such as `30m`, `8h`, `1h30m`, `90s`, `2d`.

One rounding for every length of time shown: to the nearest whole second (`_seconds`). An age
on the screen is coarser on purpose and steps down (an age of 59 s is "50s", not "1m").
"""

from __future__ import annotations

import re

_PART = re.compile(r"(\d+(?:\.\d+)?)\s*([smhdw])", re.IGNORECASE)
_UNIT = {"s": 1.0, "m": 60.0, "h": 3600.0, "d": 86400.0, "w": 604800.0}


def parse_duration(text: str | int | float, need_unit: bool = False) -> float:
    """Seconds in `text`; a bare number is seconds unless `need_unit` (where "30" could mean
    minutes to one reader and seconds to another). Raises ValueError with a readable message."""
    if isinstance(text, bool):
        raise ValueError(f"not a duration: {text!r}")
    if need_unit and (isinstance(text, int | float) or _is_number(str(text))):
        raise ValueError(f"a duration needs a unit: {str(text).strip()!r} (e.g. 30m, 2h)")
    if isinstance(text, int | float):
        if text < 0:
            raise ValueError(f"a duration cannot be negative: {text}")
        return float(text)
    s = str(text).strip()
    if not s:
        raise ValueError("empty duration")
    try:
        value = float(s)
    except ValueError:
        pos = 0
        total = 0.0
        for m in _PART.finditer(s):
            if s[pos : m.start()].strip():
                break
            total += float(m.group(1)) * _UNIT[m.group(2).lower()]
            pos = m.end()
        if pos == 0 or s[pos:].strip():
            raise ValueError(
                f"not a duration: {s!r} (use a number with s, m, h, d or w, e.g. 30m or 1h30m)"
            ) from None
        return total
    if value < 0:
        raise ValueError(f"a duration cannot be negative: {s}")
    return value


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _seconds(seconds: float) -> int:
    """The one rounding of a length of time: to the nearest whole second, never negative."""
    return round(max(0.0, seconds))


def format_duration(seconds: float) -> str:
    """Compact form: 45s, 12m, 3h05m, 2d04h."""
    s = _seconds(seconds)
    if s < 60:
        return f"{s}s"
    if s < 3600:
        return f"{s // 60}m{s % 60:02d}s" if s < 600 and s % 60 else f"{s // 60}m"
    if s < 86400:
        return f"{s // 3600}h{(s % 3600) // 60:02d}m"
    return f"{s // 86400}d{(s % 86400) // 3600:02d}h"


def format_span(seconds: float | None) -> str:
    """A length of time to the second under an hour, for reports: 45s, 12m30s, 3h05m ('' when
    missing)."""
    if seconds is None:
        return ""
    s = _seconds(seconds)
    if s < 60:
        return f"{s}s"
    if s < 3600:
        return f"{s // 60}m{s % 60:02d}s"
    return f"{s // 3600}h{(s % 3600) // 60:02d}m"


def format_age(seconds: float | None) -> str:
    """Coarse age of the newest row: <10s, 20s, 12m, 3h, 2d; '-' when nothing arrived yet.

    Coarse on purpose: the text changes at most every ten seconds, so a quiet line does not
    redraw every second just to count.
    """
    if seconds is None:
        return "-"
    s = max(0, int(seconds))
    if s < 10:
        return "<10s"
    if s < 60:
        return f"{s // 10 * 10}s"
    if s < 3600:
        return f"{s // 60}m"
    if s < 86400:
        return f"{s // 3600}h"
    return f"{s // 86400}d"
