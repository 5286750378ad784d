"""Alarm policy: how urgent each kind of alarm is, which reasons an acknowledgement may give,
which reaction plan an alarm shows, and the limits on shelving and floods.

The config only supplies data (the priorities, reasons and plans a file gives); the defaults
and the rules for choosing among config, store memory and defaults live here, once.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping, Sequence
from typing import TYPE_CHECKING, Protocol

from linewatch.config.model import (
    DEFAULT_FLOOD_ALARMS,
    DEFAULT_FLOOD_WINDOW,
    DEFAULT_SHELVE_MAX,
)
from linewatch.domain.alarm_states import DEFAULT_PRIORITIES, AlarmKind
from linewatch.domain.errors import LinewatchError
from linewatch.engine.rulebook import BEYOND, RULES

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.alarm_rows import StoredAlarm
    from linewatch.store.points import CharacteristicSettings

DEFAULT_REASONS: tuple[str, ...] = (
    "tool wear",
    "material lot change",
    "gauge or measurement error",
    "adjustment made",
    "no cause found",
)
"""Acknowledgement reasons offered when neither the characteristic nor [alarms] lists any."""

# What to do about a feed-health cause when the config gives no reaction plan for it.
DEFAULT_FEED_PLANS = {
    "no-header": ("Have the logger write a line of column names first (e.g. time,od,wall), "
                  "or add one at the top of the file: it is then read from the start."),
}

CONTROL_KINDS = (AlarmKind.BEYOND_LIMITS, AlarmKind.RUN_RULE)
"""The kinds one control-chart alarm can have (it escalates from one to the other)."""


class HasPlans(Protocol):
    """Where reaction plans come from: a characteristic's config or what the store remembers."""

    @property
    def reaction_plan(self) -> str: ...

    @property
    def reaction_plans(self) -> Mapping[str, str]: ...


def plan_for(source: HasPlans, key: str | None) -> str:
    """The reaction plan for `key` (a rule id, or a kind for out-of-spec and feed-health
    alarms): its own text first, else the characteristic's general plan."""
    if key and key in source.reaction_plans:
        return source.reaction_plans[key]
    return source.reaction_plan


def plan_key(alarm: StoredAlarm) -> str:
    """Which reaction plan an alarm looks up: a control-chart alarm its first-out rule, the
    others their kind."""
    return alarm.rule if alarm.kind in CONTROL_KINDS else alarm.kind


def offered_reasons(*lists: Sequence[str]) -> list[str]:
    """The first list that names any reason, else DEFAULT_REASONS."""
    for reasons in lists:
        if reasons:
            return list(reasons)
    return list(DEFAULT_REASONS)


def control_kind(rules: Iterable[str]) -> AlarmKind:
    """beyond-limits once any beyond-limits test fired, else run-rule."""
    for rule in rules:
        spec = RULES.get(rule)
        if spec is not None and spec.kind == BEYOND:
            return AlarmKind.BEYOND_LIMITS
    return AlarmKind.RUN_RULE


class AlarmPolicy:
    """The policy of one state directory: the config (when there is one) and, for shell
    commands run without it, what the store remembers of each characteristic."""

    def __init__(
        self,
        config: Config | None,
        remembered: Callable[[str], CharacteristicSettings | None],
    ) -> None:
        self.config = config
        self.remembered = remembered

    def priority(self, kind: str) -> int:
        """Priority of a kind of alarm (1 = most urgent): the config's, else the default."""
        if self.config is not None and kind in self.config.alarms.priorities:
            return self.config.alarms.priorities[kind]
        return DEFAULT_PRIORITIES[kind]

    def most_urgent(self, kinds: Iterable[AlarmKind]) -> AlarmKind:
        """The most urgent of `kinds` under the configured priorities (ties: the declaration
        order of AlarmKind), so an alarm takes the priority of its most urgent rule whatever
        the config ranks first."""
        order = list(AlarmKind)
        return min(set(kinds), key=lambda k: (self.priority(k), order.index(k)))

    def reasons_for(self, characteristic: str) -> list[str]:
        """Acknowledgement reasons of a characteristic: its config list (which inherits the
        [alarms] list), else what the store remembers of it, else the config-wide list, else
        the defaults."""
        if self.config is not None:
            c = self.config.characteristic(characteristic)
            if c is not None:
                return offered_reasons(c.reasons, self.config.alarms.reasons)
        settings = self.remembered(characteristic)
        return offered_reasons(
            settings.reasons if settings is not None else (),
            self.config.alarms.reasons if self.config is not None else (),
        )

    def resolve_reason(self, characteristic: str, reason: str) -> str:
        """The reason text for `reason` given as text (any case) or as its 1-based number."""
        choices = self.reasons_for(characteristic)
        menu = ", ".join(f"{n} {text}" for n, text in enumerate(choices, start=1))
        text = (reason or "").strip()
        if not text:
            raise LinewatchError(f"a reason is required (for {characteristic}: {menu})")
        if text.isdigit():
            number = int(text)
            if 1 <= number <= len(choices):
                return choices[number - 1]
            raise LinewatchError(f"no reason number {number} for {characteristic} ({menu})")
        for choice in choices:
            if choice.casefold() == text.casefold():
                return choice
        raise LinewatchError(f"unknown reason {text!r} for {characteristic} (choose: {menu})")

    def reaction_plan(self, alarm: StoredAlarm) -> str:
        """The configured text telling the operator what to do about this alarm."""
        key = plan_key(alarm)
        if self.config is not None:
            c = self.config.characteristic(alarm.characteristic)
            if c is not None:
                return plan_for(c, key)
        settings = self.remembered(alarm.characteristic)
        plan = plan_for(settings, key) if settings is not None else ""
        if not plan and alarm.kind == AlarmKind.FEED_HEALTH:
            plan = DEFAULT_FEED_PLANS.get(alarm.rule, "")
        return plan

    def shelve_limit(self) -> float:
        """The longest shelving time allowed (seconds)."""
        return self.config.alarms.shelve_max if self.config is not None else DEFAULT_SHELVE_MAX

    def flood_limit(self) -> int:
        """More alarms than this in the flood window is a flood."""
        return self.config.alarms.flood_alarms if self.config is not None else DEFAULT_FLOOD_ALARMS

    def flood_window(self) -> float:
        """Seconds over which annunciated alarms are counted for a flood."""
        return self.config.alarms.flood_window if self.config is not None else DEFAULT_FLOOD_WINDOW
