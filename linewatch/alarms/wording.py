"""Alarms in words: what condition an alarm is about, and its per-rule counts ("we2 ×44")."""

from __future__ import annotations

import contextlib
from typing import TYPE_CHECKING

from linewatch.domain.alarm_states import AlarmKind
from linewatch.domain.errors import RuleListError
from linewatch.engine.rulebook import (
    CUSUM,
    DETECTORS,
    EWMA,
    RULES,
    resolve_detectors,
    resolve_rules,
)

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.alarm_rows import StoredAlarm

_SPEC_WORDS = {
    "usl": "a measurement above the upper specification limit",
    "lsl": "a measurement below the lower specification limit",
}
_FEED_WORDS = {
    "stale": "no new row for too long (stale feed)",
    "stuck": "the same value repeated again and again (stuck gauge)",
    "unreadable": "the file cannot be read",
    "no-header": "no header line: the file's lines are not read",
    "stopped": "monitoring stopped: the collector keeps failing",
}


def describe(alarm: StoredAlarm, config: Config | None = None) -> str:
    """The alarm's condition in plain words; a run rule with a run length the config sets for
    the characteristic is described with that length."""
    if alarm.kind == AlarmKind.OUT_OF_SPEC:
        return _SPEC_WORDS.get(alarm.rule, "a measurement outside the specification")
    if alarm.kind == AlarmKind.FEED_HEALTH:
        return _FEED_WORDS.get(alarm.rule, alarm.rule)
    if alarm.rule in DETECTORS:
        return _detector_words(alarm, config)
    spec = RULES.get(alarm.rule)
    if spec is None:
        return alarm.rule
    if config is not None:
        c = config.characteristic(alarm.characteristic)
        if c is not None and alarm.rule in c.run_lengths:
            with contextlib.suppress(RuleListError):
                spec = resolve_rules([alarm.rule], c.run_lengths)[0]
    return f"{spec.describe()} ({alarm.chart} chart)"


def _detector_words(alarm: StoredAlarm, config: Config | None) -> str:
    """An EWMA or CUSUM alarm, with the characteristic's parameters when the config is known."""
    spec = DETECTORS[alarm.rule]
    c = config.characteristic(alarm.characteristic) if config is not None else None
    if c is not None:
        with contextlib.suppress(RuleListError):
            spec = resolve_detectors([alarm.rule], {EWMA: c.ewma, CUSUM: c.cusum})[0]
    return f"{spec.describe()} (on the {alarm.chart} chart's points)"


def rule_summary(alarm: StoredAlarm) -> str:
    """The alarm's counts in a few words: "we2 ×44 we3 ×37" (most frequent first)."""
    counts = alarm.rule_counts
    if not counts:
        return alarm.rule
    ordered = sorted(counts.items(), key=lambda kv: (-kv[1], kv[0]))
    return " ".join(f"{rule} ×{n}" for rule, n in ordered)
