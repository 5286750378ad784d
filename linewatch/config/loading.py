"""The TOML configuration as one typed model; every error names the file, the key and the problem.

Layout of a config file (all tables optional; see config/*.toml for commented examples):

    [monitor]          state_dir, poll_seconds, stale_after, stuck_repeats, bell, baseline,
                       shared_group, audit_anchor_file, audit_anchor_syslog,
                       audit_anchor_every, audit_key_file
    [alarms]           priorities, hook, hook_timeout, reasons, flood_alarms, flood_window,
                       shelve_max
    [[feed]]           paths, layout, delimiter, decimal, encoding, time_column, name_column,
                       value_column
    [[characteristic]] name, column, unit, lsl, usl, target, subgroup_size, dispersion, baseline,
                       center, sigma, rules, run_lengths, reasons, reaction_plan, reaction_plans,
                       clear_after, decimals
"""

from __future__ import annotations

import hashlib
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from linewatch.domain.durations import parse_duration
from linewatch.domain.errors import ConfigError, RuleListError
from linewatch.domain.records import MAX_MAGNITUDE
from linewatch.engine.episodes import DEFAULT_CLEAR_AFTER
from linewatch.engine.rulebook import DEFAULT_RULES, RULES, parse_rule_list, resolve_rules

DEFAULT_REASONS: tuple[str, ...] = (
    "tool wear",
    "material lot change",
    "gauge or measurement error",
    "adjustment made",
    "no cause found",
)

ALARM_KINDS = ("out-of-spec", "beyond-limits", "run-rule", "feed-health")
DEFAULT_PRIORITIES: dict[str, int] = {
    "out-of-spec": 1,
    "beyond-limits": 2,
    "run-rule": 3,
    "feed-health": 4,
}
LAYOUTS = ("wide", "long", "jsonl")
DISPERSIONS = ("range", "stdev")
DEFAULT_WATCH_BASELINE = 25
DEFAULT_STALE_AFTER = 600.0
DEFAULT_STUCK_REPEATS = 10
DEFAULT_FLOOD_ALARMS = 10  # more than this many alarms in the flood window is a flood
DEFAULT_FLOOD_WINDOW = 600.0  # (ISA-18.2 guidance: about 10 alarms in 10 minutes, from memory)
DEFAULT_SHELVE_MAX = 12 * 3600.0
DEFAULT_ANCHOR_EVERY = 100


@dataclass(slots=True)
class CharacteristicConfig:
    """One measured characteristic: where its values are, its specs, its chart and rules."""

    name: str
    column: str
    unit: str = ""
    lsl: float | None = None
    usl: float | None = None
    target: float | None = None
    subgroup_size: int = 1
    dispersion: str | None = None  # None: range for n <= 9, stdev for n >= 10
    baseline: int | None = None
    center: float | None = None
    sigma: float | None = None
    rules: list[str] = field(default_factory=lambda: parse_rule_list(DEFAULT_RULES))
    run_lengths: dict[str, int] = field(default_factory=dict)
    reasons: list[str] = field(default_factory=lambda: list(DEFAULT_REASONS))
    reaction_plan: str = ""
    reaction_plans: dict[str, str] = field(default_factory=dict)
    clear_after: int = DEFAULT_CLEAR_AFTER
    decimals: int | None = None  # None: from the tolerance or σ (figures.reading_decimals)

    @property
    def effective_dispersion(self) -> str:
        """range for n ≤ 9, stdev for n ≥ 10 (common practice) unless set explicitly."""
        if self.dispersion:
            return self.dispersion
        return "range" if self.subgroup_size <= 9 else "stdev"

    def plan_for(self, rule: str | None) -> str:
        """The reaction plan to show for an alarm of `rule` (per-rule text first)."""
        if rule and rule in self.reaction_plans:
            return self.reaction_plans[rule]
        return self.reaction_plan


@dataclass(slots=True)
class FeedConfig:
    """A set of log files (paths may be globs) and how their rows are laid out."""

    paths: list[str]
    layout: str = "wide"
    delimiter: str = "auto"
    decimal: str = "."
    encoding: str = "utf-8"
    time_column: str | None = None
    name_column: str = "characteristic"
    value_column: str = "value"


@dataclass(slots=True)
class AlarmConfig:
    """How alarms are ranked and announced."""

    priorities: dict[str, int] = field(default_factory=lambda: dict(DEFAULT_PRIORITIES))
    hook: list[str] = field(default_factory=list)
    hook_timeout: float = 5.0
    reasons: list[str] = field(default_factory=lambda: list(DEFAULT_REASONS))
    flood_alarms: int = DEFAULT_FLOOD_ALARMS
    flood_window: float = DEFAULT_FLOOD_WINDOW
    shelve_max: float = DEFAULT_SHELVE_MAX


@dataclass(slots=True)
class MonitorConfig:
    """Process-wide settings of the watcher."""

    state_dir: str | None = None
    poll_seconds: float = 0.0  # 0: wake on file-system events
    stale_after: float = DEFAULT_STALE_AFTER
    stuck_repeats: int = DEFAULT_STUCK_REPEATS
    bell: bool = True
    baseline: int = DEFAULT_WATCH_BASELINE
    shared_group: bool = False
    audit_anchor_file: str | None = None  # append the trail's head here (outside the store)
    audit_anchor_syslog: str | None = None  # ... and/or to syslog: "local", a socket, HOST:PORT
    audit_anchor_every: int = DEFAULT_ANCHOR_EVERY  # ... also every N entries (0: report/stop)
    audit_key_file: str | None = None  # HMAC key for new audit entries (outside the store)


@dataclass(slots=True)
class Config:
    """The whole configuration; `source` is the file it came from (or '' for defaults)."""

    source: str = ""
    digest: str = ""
    monitor: MonitorConfig = field(default_factory=MonitorConfig)
    alarms: AlarmConfig = field(default_factory=AlarmConfig)
    feeds: list[FeedConfig] = field(default_factory=list)
    characteristics: list[CharacteristicConfig] = field(default_factory=list)

    def characteristic(self, name: str) -> CharacteristicConfig | None:
        """The characteristic called `name`, if declared."""
        for c in self.characteristics:
            if c.name == name:
                return c
        return None


class _Reader:
    """Typed getters over one TOML table that raise ConfigError naming the key."""

    def __init__(self, path: str, prefix: str, table: Any) -> None:
        self.path = path
        self.prefix = prefix
        if not isinstance(table, dict):
            raise ConfigError(path, prefix, "must be a table")
        self.table: dict[str, Any] = table

    def key(self, name: str) -> str:
        return f"{self.prefix}.{name}" if self.prefix else name

    def fail(self, name: str, problem: str) -> ConfigError:
        return ConfigError(self.path, self.key(name), problem)

    def check_known(self, known: set[str]) -> None:
        for name in self.table:
            if name not in known:
                raise self.fail(name, f"unknown key (known: {', '.join(sorted(known))})")

    def string(self, name: str, default: str | None = None) -> str | None:
        v = self.table.get(name, default)
        if v is not None and not isinstance(v, str):
            raise self.fail(name, f"must be a string, got {v!r}")
        return v

    def number(self, name: str, default: float | None = None) -> float | None:
        v = self.table.get(name, default)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, int | float):
            raise self.fail(name, f"must be a number, got {v!r}")
        if not math.isfinite(float(v)):
            raise self.fail(name, "must be a finite number")
        if abs(float(v)) > MAX_MAGNITUDE:
            raise self.fail(name, f"out of range (more than {MAX_MAGNITUDE:g} in magnitude)")
        return float(v)

    def integer(self, name: str, default: int | None, lo: int, hi: int) -> int | None:
        v = self.table.get(name, default)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, int):
            raise self.fail(name, f"must be a whole number, got {v!r}")
        if not lo <= v <= hi:
            raise self.fail(name, f"must be between {lo} and {hi}, got {v}")
        return v

    def boolean(self, name: str, default: bool) -> bool:
        v = self.table.get(name, default)
        if not isinstance(v, bool):
            raise self.fail(name, f"must be true or false, got {v!r}")
        return v

    def duration(self, name: str, default: float) -> float:
        v = self.table.get(name, default)
        try:
            return parse_duration(v)
        except ValueError as exc:
            raise self.fail(name, str(exc)) from None

    def choice(self, name: str, default: str | None, options: tuple[str, ...]) -> str | None:
        v = self.string(name, default)
        if v is not None and v not in options:
            raise self.fail(name, f"must be one of {', '.join(options)}, got {v!r}")
        return v

    def string_list(self, name: str, default: list[str] | None = None) -> list[str]:
        v = self.table.get(name, default if default is not None else [])
        if isinstance(v, str):
            v = [v]
        if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
            raise self.fail(name, "must be a list of strings")
        return list(v)

    def sub_table(self, name: str) -> dict[str, Any]:
        v = self.table.get(name, {})
        if not isinstance(v, dict):
            raise self.fail(name, "must be a table")
        return v


def _read_monitor(path: str, table: Any) -> MonitorConfig:
    r = _Reader(path, "monitor", table)
    r.check_known(
        {"state_dir", "poll_seconds", "stale_after", "stuck_repeats", "bell", "baseline",
         "shared_group", "audit_anchor_file", "audit_anchor_syslog", "audit_anchor_every",
         "audit_key_file"}
    )
    syslog = r.string("audit_anchor_syslog") or None
    if syslog is not None:
        from linewatch.store.anchors import parse_syslog_target

        try:
            parse_syslog_target(syslog)
        except ValueError as exc:
            raise r.fail("audit_anchor_syslog", str(exc)) from None
    poll = r.duration("poll_seconds", 0.0)
    return MonitorConfig(
        state_dir=r.string("state_dir"),
        poll_seconds=poll,
        stale_after=r.duration("stale_after", DEFAULT_STALE_AFTER),
        stuck_repeats=r.integer("stuck_repeats", DEFAULT_STUCK_REPEATS, 0, 100000) or 0,
        bell=r.boolean("bell", True),
        baseline=r.integer("baseline", DEFAULT_WATCH_BASELINE, 2, 10_000_000)
        or DEFAULT_WATCH_BASELINE,
        shared_group=r.boolean("shared_group", False),
        audit_anchor_file=r.string("audit_anchor_file") or None,
        audit_anchor_syslog=syslog,
        audit_anchor_every=r.integer("audit_anchor_every", DEFAULT_ANCHOR_EVERY, 0, 10_000_000)
        or 0,
        audit_key_file=r.string("audit_key_file") or None,
    )


def _read_alarms(path: str, table: Any) -> AlarmConfig:
    r = _Reader(path, "alarms", table)
    r.check_known({"priorities", "hook", "hook_timeout", "reasons", "flood_alarms",
                   "flood_window", "shelve_max"})
    prio = dict(DEFAULT_PRIORITIES)
    pr = _Reader(path, "alarms.priorities", r.sub_table("priorities"))
    pr.check_known(set(ALARM_KINDS))
    for kind in ALARM_KINDS:
        value = pr.integer(kind, None, 1, 99)
        if value is not None:
            prio[kind] = value
    reasons = r.string_list("reasons", list(DEFAULT_REASONS))
    if not reasons:
        raise r.fail("reasons", "needs at least one reason")
    timeout = r.duration("hook_timeout", 5.0)
    if timeout <= 0:
        raise r.fail("hook_timeout", "must be more than 0 seconds")
    if isinstance(r.table.get("hook"), str):
        raise r.fail("hook", "must be a list of arguments, e.g. [\"/usr/bin/light\", \"red\"] "
                             "(never a shell command line)")
    window = r.duration("flood_window", DEFAULT_FLOOD_WINDOW)
    if window <= 0:
        raise r.fail("flood_window", "must be more than 0 seconds")
    shelve_max = r.duration("shelve_max", DEFAULT_SHELVE_MAX)
    if shelve_max <= 0:
        raise r.fail("shelve_max", "must be more than 0 seconds")
    return AlarmConfig(
        priorities=prio, hook=r.string_list("hook"), hook_timeout=timeout, reasons=reasons,
        flood_alarms=r.integer("flood_alarms", DEFAULT_FLOOD_ALARMS, 1, 100_000)
        or DEFAULT_FLOOD_ALARMS,
        flood_window=window, shelve_max=shelve_max,
    )


def _read_feed(path: str, index: int, table: Any) -> FeedConfig:
    r = _Reader(path, f"feed[{index}]", table)
    r.check_known(
        {"paths", "layout", "delimiter", "decimal", "encoding", "time_column", "name_column",
         "value_column"}
    )
    paths = r.string_list("paths")
    if not paths:
        raise r.fail("paths", "needs at least one file or glob")
    delimiter = r.string("delimiter", "auto") or "auto"
    if delimiter not in ("auto", ",", ";", "\t", "|"):
        raise r.fail("delimiter", f"must be auto, ',', ';', '\\t' or '|', got {delimiter!r}")
    encoding = r.string("encoding", "utf-8") or "utf-8"
    try:
        "".encode(encoding)
    except LookupError:
        raise r.fail("encoding", f"unknown encoding {encoding!r}") from None
    return FeedConfig(
        paths=paths,
        layout=r.choice("layout", "wide", LAYOUTS) or "wide",
        delimiter=delimiter,
        decimal=r.choice("decimal", ".", (".", ",")) or ".",
        encoding=encoding,
        time_column=r.string("time_column"),
        name_column=r.string("name_column", "characteristic") or "characteristic",
        value_column=r.string("value_column", "value") or "value",
    )


def _read_characteristic(
    path: str, index: int, table: Any, default_reasons: list[str]
) -> CharacteristicConfig:
    r = _Reader(path, f"characteristic[{index}]", table)
    r.check_known(
        {"name", "column", "unit", "lsl", "usl", "target", "subgroup_size", "dispersion",
         "baseline", "center", "sigma", "rules", "run_lengths", "reasons", "reaction_plan",
         "reaction_plans", "clear_after", "decimals"}
    )
    name = r.string("name")
    if not name:
        raise r.fail("name", "is required")
    r.prefix = f"characteristic.{name}"
    lsl, usl = r.number("lsl"), r.number("usl")
    if lsl is not None and usl is not None and lsl >= usl:
        raise r.fail("lsl", f"must be below usl ({lsl} >= {usl})")
    center, sigma = r.number("center"), r.number("sigma")
    if (center is None) != (sigma is None):
        raise r.fail("sigma" if sigma is None else "center", "center and sigma go together")
    if sigma is not None and sigma <= 0:
        raise r.fail("sigma", f"must be more than 0, got {sigma}")
    rules_value = r.table.get("rules", DEFAULT_RULES)
    if not isinstance(rules_value, str | list):
        raise r.fail("rules", "must be a string or a list of rule ids and set names")
    try:
        rules = parse_rule_list(rules_value)
    except RuleListError as exc:
        raise r.fail("rules", str(exc)) from None
    lengths_reader = _Reader(path, r.key("run_lengths"), r.sub_table("run_lengths"))
    lengths_reader.check_known(set(RULES))
    lengths = {k: lengths_reader.integer(k, None, 2, 100) or 0 for k in lengths_reader.table}
    try:
        resolve_rules(sorted(set(rules) | set(lengths)), lengths)
    except RuleListError as exc:
        raise r.fail("run_lengths", str(exc)) from None
    plans_reader = _Reader(path, r.key("reaction_plans"), r.sub_table("reaction_plans"))
    plans_reader.check_known(set(RULES) | {"out-of-spec", "feed-health"})
    plans = {k: plans_reader.string(k) or "" for k in plans_reader.table}
    reasons = r.string_list("reasons", default_reasons)
    if not reasons:
        raise r.fail("reasons", "needs at least one reason")
    return CharacteristicConfig(
        name=name,
        column=r.string("column", name) or name,
        unit=r.string("unit", "") or "",
        lsl=lsl,
        usl=usl,
        target=r.number("target"),
        subgroup_size=r.integer("subgroup_size", 1, 1, 25) or 1,
        dispersion=r.choice("dispersion", None, DISPERSIONS),
        baseline=r.integer("baseline", None, 2, 10_000_000),
        center=center,
        sigma=sigma,
        rules=rules,
        run_lengths=lengths,
        reasons=reasons,
        reaction_plan=r.string("reaction_plan", "") or "",
        reaction_plans=plans,
        clear_after=r.integer("clear_after", DEFAULT_CLEAR_AFTER, 1, 100_000)
        or DEFAULT_CLEAR_AFTER,
        decimals=r.integer("decimals", None, 0, 10),
    )


def parse_config(text: str, source: str = "<config>") -> Config:
    """Build a Config from TOML text; raises ConfigError naming `source` and the key."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(source, "(syntax)", str(exc)) from None
    top = _Reader(source, "", data)
    top.check_known({"monitor", "alarms", "feed", "characteristic"})
    alarms = _read_alarms(source, data.get("alarms", {}))
    feeds_raw = data.get("feed", [])
    chars_raw = data.get("characteristic", [])
    if not isinstance(feeds_raw, list):
        raise ConfigError(source, "feed", "must be an array of tables ([[feed]])")
    if not isinstance(chars_raw, list):
        raise ConfigError(source, "characteristic", "must be an array of tables")
    chars = [_read_characteristic(source, i, t, alarms.reasons) for i, t in enumerate(chars_raw)]
    seen: set[str] = set()
    for c in chars:
        if c.name in seen:
            raise ConfigError(source, f"characteristic.{c.name}", "declared twice")
        seen.add(c.name)
    return Config(
        source=source,
        digest=hashlib.sha256(text.encode("utf-8")).hexdigest(),
        monitor=_read_monitor(source, data.get("monitor", {})),
        alarms=alarms,
        feeds=[_read_feed(source, i, t) for i, t in enumerate(feeds_raw)],
        characteristics=chars,
    )


def load_config(path: str | Path) -> Config:
    """Read and validate a config file; relative feed paths are taken from the file's folder."""
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise ConfigError(str(p), "", "no such config file") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise ConfigError(str(p), "", f"cannot read this config file: {exc}") from None
    config = parse_config(text, str(p))
    base = p.resolve().parent
    for feed in config.feeds:
        feed.paths = [q if Path(q).is_absolute() else str(base / q) for q in feed.paths]
    mon = config.monitor
    if mon.state_dir and not Path(mon.state_dir).is_absolute():
        mon.state_dir = str(base / mon.state_dir)
    if mon.audit_anchor_file and not Path(mon.audit_anchor_file).expanduser().is_absolute():
        mon.audit_anchor_file = str(base / mon.audit_anchor_file)
    if mon.audit_key_file and not Path(mon.audit_key_file).expanduser().is_absolute():
        mon.audit_key_file = str(base / mon.audit_key_file)
    return config
