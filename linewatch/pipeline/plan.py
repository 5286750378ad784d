"""What one watch charts: the feeds and characteristics of a `WatchPlan`, and — when the plan
names no characteristic — the ones found in the data.

Discovery lives here once: the collector asks `Characteristics.config_for` when a column
arrives, and the screen asks `Characteristics.including` for the names that have stored points,
so both chart a discovered characteristic alike (the command line's options, the config's
acknowledgement reasons).
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field

from linewatch.config.model import CharacteristicConfig, Config, FeedConfig


@dataclass(slots=True)
class WatchPlan:
    """What to watch: the feeds (with their patterns) and the characteristics."""

    config: Config
    feeds: list[FeedConfig]
    characteristics: list[CharacteristicConfig]  # empty: discover every numeric column
    columns: list[str] | None  # columns to keep (None: every numeric column)
    baseline: int
    title: str = ""
    asked: list[str] | None = None  # columns named on the command line (`--column`)
    overrides: Callable[[CharacteristicConfig], CharacteristicConfig] = field(
        default=lambda c: c
    )
    text_columns: list[str] = field(default_factory=list)  # sample ids, pass/fail results

    @property
    def discovers(self) -> bool:
        """True when the plan names no characteristic: every numeric column is charted."""
        return not self.characteristics

    def discovered(self, name: str) -> CharacteristicConfig:
        """How a characteristic found in the data (not declared) is charted: the command
        line's options, and the config-wide acknowledgement reasons."""
        return self.overrides(CharacteristicConfig(
            name=name, column=name, reasons=list(self.config.alarms.reasons)))


class Characteristics:
    """The characteristics of one watch by name and by column: the declared ones, plus those
    discovered so far when the plan declares none. Written by the collector's thread, read
    (as copies) by the screen's."""

    def __init__(self, plan: WatchPlan) -> None:
        self.plan = plan
        self.configs: dict[str, CharacteristicConfig] = {c.name: c for c in plan.characteristics}
        self._by_column: dict[str, str] = {c.column: c.name for c in plan.characteristics}

    def name_for_column(self, column: str) -> str | None:
        """The characteristic a data column feeds (None: a column the plan does not chart)."""
        name = self._by_column.get(column)
        if name is None and self.plan.discovers:
            return column
        return name

    def config_for(self, name: str) -> CharacteristicConfig | None:
        """How `name` is charted; a name met for the first time is discovered (when the plan
        discovers) and remembered. None: the plan does not chart it."""
        c = self.configs.get(name)
        if c is None and self.plan.discovers:
            c = self.plan.discovered(name)
            self.configs[name] = c
            self._by_column[name] = name
        return c

    def is_discovered(self, name: str) -> bool:
        """True for a characteristic found in the data rather than named by the plan."""
        return self.plan.discovers and name in self.configs

    def including(self, found: Callable[[], Iterable[str]]) -> list[CharacteristicConfig]:
        """The known characteristics plus, when the plan discovers, the names `found()` gives
        (e.g. those with stored points, found by another instance), charted as discovered
        ones; `found` is not called otherwise. Nothing is remembered: a reader never changes
        what the collector holds."""
        known = dict(self.configs)
        if self.plan.discovers:
            for name in found():
                if name not in known:
                    known[name] = self.plan.discovered(name)
        return list(known.values())
