"""Display-only text helpers: numbers, ages, clock times, states and priorities as short words."""

from __future__ import annotations

import math

from linewatch.domain.alarm_states import AlarmKind
from linewatch.present import view

STATE_WORDS = {
    view.STATE_ALARM: "ALARM",
    view.STATE_WATCH: "watch",
    view.STATE_STALE: "stale",
    view.STATE_REFUSED: "refused",
    view.STATE_LEARNING: "learn",
    view.STATE_OK: "ok",
}

# Worst first, for sorting and for the "needs attention" filter.
STATE_ORDER = {
    view.STATE_ALARM: 0,
    view.STATE_WATCH: 1,
    view.STATE_STALE: 2,
    view.STATE_REFUSED: 3,
    view.STATE_LEARNING: 4,
    view.STATE_OK: 5,
}

ALARM_STATE_WORDS = {
    view.UNACKNOWLEDGED: "UNACK",
    view.ACKNOWLEDGED: "acked",
    view.RETURNED_UNACKNOWLEDGED: "rtn-unack",
    view.NORMAL: "normal",
    view.SHELVED: "shelved",
}


def needs_attention(state: str) -> bool:
    """Alarm, watch, stale and refused (no limits) characteristics are the ones an operator
    must look at."""
    return STATE_ORDER.get(state, 5) <= STATE_ORDER[view.STATE_REFUSED]


def fmt_value(value: float | None, digits: int = 4) -> str:
    """A measurement with `digits` significant figures; '-' when missing."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if value == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(0, digits - 1 - magnitude)
    return f"{value:.{decimals}f}"


def fmt_scaled(value: float | None, scale: float | None, significant: int = 2) -> str:
    """`value` with as many decimals as `scale` (a spread such as σ) needs for `significant`
    digits, so a mean and its interval never collapse to the same printed number."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if not scale or scale <= 0 or math.isnan(scale):
        return fmt_value(value)
    decimals = min(8, max(0, significant - 1 - math.floor(math.log10(scale))))
    return f"{value:.{decimals}f}"


def fmt_fixed(value: float | None, decimals: int = 2) -> str:
    """A ratio such as Cpk with fixed decimals; '-' when missing."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    return f"{value:.{decimals}f}"


def base_name(path: str) -> str:
    """The file's own name, without its folder (either kind of slash)."""
    return path.replace("\\", "/").rstrip("/").rsplit("/", 1)[-1] or path


def fmt_span(seconds: float) -> str:
    """A rough length of time for projections: 45s, 3m, 2h10m, 3d; coarse on purpose."""
    s = max(0, round(seconds))
    if s < 90:
        return f"{s}s"
    if s < 90 * 60:
        return f"{round(s / 60)}m"
    if s < 48 * 3600:
        hours, minutes = divmod(round(s / 60), 60)
        return f"{hours}h{minutes:02d}m" if minutes else f"{hours}h"
    return f"{round(s / 86400)}d"


def alarm_counts(alarm: view.AlarmView) -> str:
    """What one alarm gathered, in a few words: the chart and its per-rule counts for a chart
    alarm ("individuals: we2 ×44 we3 ×37, 4 episodes"), the parts to quarantine for an
    out-of-spec alarm ("5 above USL, 2 below LSL"), the condition for feed health."""
    episodes = f", {alarm.episodes} episodes" if alarm.episodes > 1 else ""
    if alarm.kind == AlarmKind.OUT_OF_SPEC:
        parts = [f"{n} {side}" for n, side in ((alarm.above_usl, "above USL"),
                                                (alarm.below_lsl, "below LSL")) if n]
        return (", ".join(parts) or "outside the specification") + episodes
    if alarm.kind == AlarmKind.FEED_HEALTH:
        return (alarm.description or alarm.rule) + episodes
    return f"{alarm.chart}: {alarm.counts or alarm.rule}{episodes}"


def alarm_subject(alarm: view.AlarmView) -> str:
    """What an alarm is about, short: a feed-health alarm on a file shows the file's base name
    (the full path stays in the alarm's detail line)."""
    subject = alarm.characteristic
    if alarm.kind == AlarmKind.FEED_HEALTH and ("/" in subject or "\\" in subject):
        return base_name(subject)
    return subject


def to_acknowledge(alarms: list[view.AlarmView]) -> tuple[int, int]:
    """(alarms still needing an acknowledgement, how many of them are still active). Both the
    unacknowledged and the returned-unacknowledged ones wait for an operator (ISA-18.2)."""
    active = sum(1 for a in alarms if a.state == view.UNACKNOWLEDGED)
    returned = sum(1 for a in alarms if a.state == view.RETURNED_UNACKNOWLEDGED)
    return active + returned, active
