"""Moments in time, read and shown the one way linewatch does it everywhere.

Parsing: an ISO date or date-time (local time when it has no offset) and `--since` (a duration
back from now, or such a moment). Showing: local time with its UTC offset to the second, and the
shorter forms lists and screens use. Every form rounds the same way: to the second, down.
"""

from __future__ import annotations

import time
from datetime import datetime

from linewatch.domain.errors import LinewatchError


def parse_moment(text: str, option: str) -> float:
    """An ISO date or date-time as epoch seconds; without an offset it is local time.
    A bad text raises LinewatchError naming `option`."""
    try:
        stamp = datetime.fromisoformat(text.strip())
    except ValueError:
        raise LinewatchError(
            f"{option}: not a date or time: {text!r} (use e.g. 2026-03-02 or 2026-03-02T06:00)"
        ) from None
    if stamp.tzinfo is None:
        stamp = stamp.astimezone()  # naive: the local time zone
    return stamp.timestamp()


def parse_since(text: str, now: float | None = None, option: str = "--since") -> float:
    """Epoch seconds for `--since`: a duration back from now (8h) or an ISO date/time (a time
    without an offset is local time)."""
    from linewatch.domain.durations import parse_duration

    now = time.time() if now is None else now
    try:
        return now - parse_duration(text)
    except ValueError:
        pass
    try:
        return parse_moment(text, option)
    except LinewatchError:
        raise LinewatchError(
            f"{option}: {text!r} is neither a duration (8h, 30m) nor an ISO date/time"
        ) from None


def local_time(epoch: float | None) -> str:
    """Local time with its UTC offset, to the second: 2026-03-02 06:15:00 +01:00 ('' for None)."""
    if epoch is None:
        return ""
    stamp = datetime.fromtimestamp(epoch).astimezone()
    offset = stamp.strftime("%z")
    return f"{stamp:%Y-%m-%d %H:%M:%S} {offset[:3]}:{offset[3:]}"


def iso_time(epoch: float | None) -> str | None:
    """Local time with its UTC offset in ISO 8601, to the second, for JSON (None stays None)."""
    if epoch is None:
        return None
    return datetime.fromtimestamp(epoch).astimezone().isoformat(timespec="seconds")


def clock_time(epoch: float | None, since: float, until: float) -> str:
    """Local time with offset, without the date when the whole period lies in one local day."""
    if epoch is None:
        return ""
    one_day = datetime.fromtimestamp(since).date() == datetime.fromtimestamp(until).date()
    full = local_time(epoch)
    return full[11:] if one_day else full


def short_time(epoch: float | None, since: float, until: float) -> str:
    """Local time without its offset (a heading gives it), without the date when the period
    lies in one local day: for lists that repeat many times."""
    if epoch is None:
        return ""
    full = clock_time(epoch, since, until)
    return full.rsplit(" ", 1)[0]


def time_of_day(epoch: float) -> str:
    """Local wall-clock time of day, HH:MM:SS."""
    return time.strftime("%H:%M:%S", time.localtime(epoch))


def day_and_time(epoch: float) -> str:
    """Local date and time with the offset, for details where the day matters."""
    return time.strftime("%Y-%m-%d %H:%M:%S %z", time.localtime(epoch))


def local_offset(epoch: float) -> float:
    """Seconds the local clock is east of UTC at `epoch` (clock windows align to it)."""
    offset = datetime.fromtimestamp(epoch).astimezone().utcoffset()
    return offset.total_seconds() if offset is not None else 0.0
