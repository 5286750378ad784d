"""Reading a TOML config file into the typed model of `config.model`.

Every problem is a ConfigError naming the file, the key and what is wrong. Defaults are never
written here: a key left out takes the default its field declares in the model, and the keys
a table knows are its record's fields.
"""

from __future__ import annotations

import hashlib
import math
import tomllib
from pathlib import Path
from typing import Any, TypeVar

from linewatch.config.chart_choice import chart_problem
from linewatch.config.choices import (
    ATTRIBUTE_CHART_NAMES,
    DECIMAL_MARKS,
    DELIMITERS,
    DISPERSIONS,
    LAYOUTS,
)
from linewatch.config.fields import field_default, field_names
from linewatch.config.model import (
    AlarmConfig,
    CharacteristicConfig,
    Config,
    FeedConfig,
    MonitorConfig,
    PlantConfig,
)
from linewatch.config.overrides import MAX_PARTS, parse_window
from linewatch.config.syslog_target import parse_syslog_target
from linewatch.domain.alarm_states import DEFAULT_PRIORITIES, AlarmKind
from linewatch.domain.durations import parse_duration
from linewatch.domain.errors import ConfigError, RuleListError
from linewatch.domain.records import MAX_MAGNITUDE
from linewatch.engine.rulebook import (
    CUSUM,
    DETECTOR_OPTIONS,
    DETECTORS,
    EWMA,
    RULES,
    parse_rule_list,
    resolve_detectors,
    resolve_rules,
)

Word = TypeVar("Word", bound=str)

_FROM_MODEL: Any = object()  # a getter's default: the field's default in the table's record


class _Reader:
    """Typed getters over one TOML table that raise ConfigError naming the key. A key that is
    absent takes the default of the same-named field of `model` (the table's record)."""

    def __init__(self, path: str, prefix: str, table: Any, model: type[Any] | None = None
                 ) -> None:
        self.path = path
        self.prefix = prefix
        self.model = model
        if not isinstance(table, dict):
            raise ConfigError(path, prefix, "must be a table")
        self.table: dict[str, Any] = table

    def key(self, name: str) -> str:
        return f"{self.prefix}.{name}" if self.prefix else name

    def fail(self, name: str, problem: str) -> ConfigError:
        return ConfigError(self.path, self.key(name), problem)

    def check_known(self, known: set[str] | None = None) -> None:
        """Every key is one of `known` (default: the fields of the table's record)."""
        if known is None:
            if self.model is None:
                raise LookupError(f"{self.prefix}: a table without a record names its keys")
            known = field_names(self.model)
        for name in self.table:
            if name not in known:
                raise self.fail(name, f"unknown key (known: {', '.join(sorted(known))})")

    def default(self, name: str) -> Any:
        """The declared default of key `name`: its field's in the table's record."""
        if self.model is None:
            raise LookupError(f"{self.key(name)}: no record declares its default")
        return field_default(self.model, name)

    def _get(self, name: str, default: Any) -> Any:
        if name in self.table:
            return self.table[name]
        return self.default(name) if default is _FROM_MODEL else default

    def string(self, name: str, default: Any = _FROM_MODEL) -> str | None:
        v = self._get(name, default)
        if v is not None and not isinstance(v, str):
            raise self.fail(name, f"must be a string, got {v!r}")
        return v

    def text(self, name: str) -> str:
        """A string whose empty value means the declared default."""
        return self.string(name) or str(self.default(name))

    def number(self, name: str, default: Any = _FROM_MODEL) -> float | None:
        v = self._get(name, default)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, int | float):
            raise self.fail(name, f"must be a number, got {v!r}")
        if not math.isfinite(float(v)):
            raise self.fail(name, "must be a finite number")
        if abs(float(v)) > MAX_MAGNITUDE:
            raise self.fail(name, f"out of range (more than {MAX_MAGNITUDE:g} in magnitude)")
        return float(v)

    def optional_integer(self, name: str, lo: int, hi: int, default: Any = _FROM_MODEL
                         ) -> int | None:
        v = self._get(name, default)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, int):
            raise self.fail(name, f"must be a whole number, got {v!r}")
        if not lo <= v <= hi:
            raise self.fail(name, f"must be between {lo} and {hi}, got {v}")
        return v

    def integer(self, name: str, lo: int, hi: int) -> int:
        v = self.optional_integer(name, lo, hi)
        if v is None:
            raise LookupError(f"{self.key(name)}: its record declares no whole-number default")
        return v

    def boolean(self, name: str) -> bool:
        v = self._get(name, _FROM_MODEL)
        if not isinstance(v, bool):
            raise self.fail(name, f"must be true or false, got {v!r}")
        return v

    def duration(self, name: str) -> float:
        v = self._get(name, _FROM_MODEL)
        try:
            return parse_duration(v)
        except ValueError as exc:
            raise self.fail(name, str(exc)) from None

    def positive_duration(self, name: str) -> float:
        seconds = self.duration(name)
        if seconds <= 0:
            raise self.fail(name, "must be more than 0 seconds")
        return seconds

    def optional_choice(self, name: str, options: tuple[Word, ...]) -> Word | None:
        v = self.string(name)
        if v is None:
            return None
        for option in options:
            if v == option:
                return option
        raise self.fail(name, f"must be one of {', '.join(options)}, got {v!r}")

    def choice(self, name: str, options: tuple[Word, ...]) -> Word:
        v = self.optional_choice(name, options)
        if v is None:
            raise LookupError(f"{self.key(name)}: its record declares no default choice")
        return v

    def string_list(self, name: str, default: Any = _FROM_MODEL) -> list[str]:
        v = self._get(name, default)
        if isinstance(v, str):
            v = [v]
        if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
            raise self.fail(name, "must be a list of strings")
        return list(v)

    def reasons(self, name: str, default: Any = _FROM_MODEL) -> list[str]:
        reasons = self.string_list(name, default)
        if name in self.table and not reasons:  # none given: the alarm policy's defaults
            raise self.fail(name, "needs at least one reason")
        return reasons

    def column_name(self, name: str) -> str | None:
        """A column of the log, or None when the key is absent (an empty name is refused)."""
        v = self.string(name)
        if v is not None and not v.strip():
            raise self.fail(name, "must name a column, got an empty string")
        return v.strip() if v is not None else None

    def window(self, name: str) -> float | None:
        """A clock window: a duration with its unit, from 1 second to 1 day, or None."""
        v = self._get(name, _FROM_MODEL)
        if v is None:
            return None
        try:
            seconds = parse_window(v)
        except ValueError as exc:
            raise self.fail(name, str(exc)) from None
        return seconds

    def sub_table(self, name: str) -> dict[str, Any]:
        v = self.table.get(name, {})
        if not isinstance(v, dict):
            raise self.fail(name, "must be a table")
        return v


def _read_monitor(path: str, table: Any) -> MonitorConfig:
    r = _Reader(path, "monitor", table, MonitorConfig)
    r.check_known()
    syslog = r.string("audit_anchor_syslog") or None
    if syslog is not None:
        try:
            parse_syslog_target(syslog)
        except ValueError as exc:
            raise r.fail("audit_anchor_syslog", str(exc)) from None
    poll = r.duration("poll_seconds")
    return MonitorConfig(
        state_dir=r.string("state_dir"),
        poll_seconds=poll,
        stale_after=r.duration("stale_after"),
        stuck_repeats=r.integer("stuck_repeats", 0, 100000),
        bell=r.boolean("bell"),
        baseline=r.integer("baseline", 2, 10_000_000),
        shared_group=r.boolean("shared_group"),
        audit_anchor_file=r.string("audit_anchor_file") or None,
        audit_anchor_syslog=syslog,
        audit_anchor_every=r.integer("audit_anchor_every", 0, 10_000_000),
        audit_key_file=r.string("audit_key_file") or None,
    )


LINE_NAME_MAX = 64


def _read_plant(path: str, table: Any) -> PlantConfig:
    """`[plant]`: a PostgreSQL URL (never echoed with its password) and the line's name."""
    r = _Reader(path, "plant", table, PlantConfig)
    r.check_known()
    url = r.string("url") or None
    if url is not None and not (url.startswith(("postgresql://", "postgres://"))
                                or ("=" in url and "://" not in url)):
        raise r.fail("url", "must be a postgresql:// URL or a key=value connection string")
    line = r.string("line")
    if line is not None:
        line = line.strip()
        if not line or len(line) > LINE_NAME_MAX or not line.isprintable():
            raise r.fail("line", f"must be 1 to {LINE_NAME_MAX} printable characters")
    return PlantConfig(url=url, line=line)


def _read_alarms(path: str, table: Any) -> AlarmConfig:
    r = _Reader(path, "alarms", table, AlarmConfig)
    r.check_known()
    prio = dict(DEFAULT_PRIORITIES)
    pr = _Reader(path, "alarms.priorities", r.sub_table("priorities"))
    pr.check_known(set(AlarmKind))
    for kind in AlarmKind:
        value = pr.optional_integer(kind, 1, 99, default=None)
        if value is not None:
            prio[kind] = value
    reasons = r.reasons("reasons")
    timeout = r.positive_duration("hook_timeout")
    if isinstance(r.table.get("hook"), str):
        raise r.fail("hook", "must be a list of arguments, e.g. [\"/usr/bin/light\", \"red\"] "
                             "(never a shell command line)")
    window = r.positive_duration("flood_window")
    shelve_max = r.positive_duration("shelve_max")
    return AlarmConfig(
        priorities=prio, hook=r.string_list("hook"), hook_timeout=timeout, reasons=reasons,
        flood_alarms=r.integer("flood_alarms", 1, 100_000),
        flood_window=window, shelve_max=shelve_max,
    )


def _read_feed(path: str, index: int, table: Any) -> FeedConfig:
    r = _Reader(path, f"feed[{index}]", table, FeedConfig)
    r.check_known()
    paths = r.string_list("paths", default=[])
    if not paths:
        raise r.fail("paths", "needs at least one file or glob")
    given = r.text("delimiter")
    delimiter = next((d for d in DELIMITERS if d == given), None)
    if delimiter is None:
        raise r.fail("delimiter", f"must be auto, ',', ';', '\\t' or '|', got {given!r}")
    encoding = r.text("encoding")
    try:
        "".encode(encoding)
    except LookupError:
        raise r.fail("encoding", f"unknown encoding {encoding!r}") from None
    return FeedConfig(
        paths=paths,
        layout=r.choice("layout", LAYOUTS),
        delimiter=delimiter,
        decimal=r.choice("decimal", DECIMAL_MARKS),
        encoding=encoding,
        time_column=r.string("time_column"),
        name_column=r.text("name_column"),
        value_column=r.text("value_column"),
    )


def _read_characteristic(
    path: str, index: int, table: Any, default_reasons: list[str]
) -> CharacteristicConfig:
    r = _Reader(path, f"characteristic[{index}]", table, CharacteristicConfig)
    r.check_known()
    name = r.string("name", default=None)
    if not name:
        raise r.fail("name", "is required")
    r.prefix = f"characteristic.{name}"
    lsl, usl = r.number("lsl"), r.number("usl")
    if lsl is not None and usl is not None and lsl >= usl:
        raise r.fail("lsl", f"must be below usl ({lsl} >= {usl})")
    center, sigma = r.number("center"), r.number("sigma")
    attribute = "count_column" in r.table or "result_column" in r.table
    if (center is None) != (sigma is None) and not (attribute and sigma is None):
        raise r.fail("sigma" if sigma is None else "center", "center and sigma go together")
    if sigma is not None and sigma <= 0:
        raise r.fail("sigma", f"must be more than 0, got {sigma}")
    rules: list[str] = r.default("rules")
    if "rules" in r.table:
        rules_value = r.table["rules"]
        if not isinstance(rules_value, str) and not (
                isinstance(rules_value, list) and all(isinstance(x, str) for x in rules_value)):
            raise r.fail("rules", "must be a string or a list of rule ids and set names")
        try:
            rules = parse_rule_list(rules_value)
        except RuleListError as exc:
            raise r.fail("rules", str(exc)) from None
    lengths_reader = _Reader(path, r.key("run_lengths"), r.sub_table("run_lengths"))
    lengths_reader.check_known(set(RULES))
    lengths = {k: lengths_reader.integer(k, 2, 100) for k in lengths_reader.table}
    try:
        resolve_rules(sorted(set(rules) | set(lengths)), lengths)
    except RuleListError as exc:
        raise r.fail("run_lengths", str(exc)) from None
    detector_options = {d: _read_detector(path, r, d) for d in DETECTORS}
    plans_reader = _Reader(path, r.key("reaction_plans"), r.sub_table("reaction_plans"))
    plans_reader.check_known(
        set(RULES) | set(DETECTORS) | {AlarmKind.OUT_OF_SPEC, AlarmKind.FEED_HEALTH})
    plans = {k: plans_reader.string(k) or "" for k in plans_reader.table}
    ways = [k for k in ("subgroup_size", "subgroup_by", "subgroup_window") if k in r.table]
    if len(ways) > 1:
        raise r.fail(ways[1], f"{ways[0]} and {ways[1]} exclude each other: subgroups are "
                              "consecutive rows, rows of one sample id or rows of one clock "
                              "window")
    char = CharacteristicConfig(
        name=name,
        column=r.string("column", default=name) or name,
        unit=r.text("unit"),
        lsl=lsl,
        usl=usl,
        target=r.number("target"),
        subgroup_size=r.integer("subgroup_size", 1, MAX_PARTS),
        dispersion=r.optional_choice("dispersion", DISPERSIONS),
        baseline=r.optional_integer("baseline", 2, 10_000_000),
        center=center,
        sigma=sigma,
        rules=rules,
        run_lengths=lengths,
        reasons=r.reasons("reasons", default=default_reasons),  # [alarms] reasons by default
        reaction_plan=r.text("reaction_plan"),
        reaction_plans=plans,
        clear_after=r.integer("clear_after", 1, 100_000),
        decimals=r.optional_integer("decimals", 0, 10),
        ewma=detector_options[EWMA],
        cusum=detector_options[CUSUM],
        subgroup_by=r.column_name("subgroup_by"),
        subgroup_window=r.window("subgroup_window"),
        subgroup_timeout=r.positive_duration("subgroup_timeout"),
        chart=r.optional_choice("chart", ATTRIBUTE_CHART_NAMES),
        count_column=r.column_name("count_column"),
        size_column=r.column_name("size_column"),
        result_column=r.column_name("result_column"),
        fail_values=r.string_list("fail_values"),
        pass_values=r.string_list("pass_values"),
        phase_by=r.string("phase_by"),
        practical_share=_practical_share(r),
    )
    problem = chart_problem(char)
    if problem is not None:
        raise r.fail(*problem)
    if "column" not in r.table and char.is_attribute:  # named by the column it counts in
        char.column = char.count_column or char.result_column or name
    return char


def _read_detector(path: str, r: _Reader, detector: str) -> dict[str, float]:
    """A characteristic's `ewma = {...}` or `cusum = {...}` table: known options, numbers in
    range (the message names the key and the allowed range)."""
    table = r.sub_table(detector)
    reader = _Reader(path, r.key(detector), table)
    reader.check_known(set(DETECTOR_OPTIONS[detector]))
    out: dict[str, float] = {}
    for name, raw in table.items():
        try:
            resolve_detectors([detector], {detector: {name: raw}})
        except RuleListError as exc:
            raise reader.fail(name, str(exc).removeprefix(f"{detector} {name} ")) from None
        out[name] = float(raw)
    try:
        resolve_detectors([detector], {detector: out})
    except RuleListError as exc:
        raise reader.fail("headstart", str(exc)) from None
    return out


def _practical_share(r: _Reader) -> float:
    """Percent of the tolerance: more than 0, at most 100."""
    value = r.number("practical_share")
    if value is None or not 0 < value <= 100:
        raise r.fail("practical_share", "must be a percentage of the tolerance, more than 0 "
                     "and at most 100")
    return value


def parse_config(text: str, source: str = "<config>") -> Config:
    """Build a Config from TOML text; raises ConfigError naming `source` and the key."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ConfigError(source, "(syntax)", str(exc)) from None
    top = _Reader(source, "", data)
    top.check_known({"monitor", "alarms", "feed", "characteristic", "plant"})
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
        plant=_read_plant(source, data.get("plant", {})),
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
