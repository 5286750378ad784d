"""The configuration as typed records: what a config file may say, with every default declared
here once (the TOML reader in `config.loading` takes its defaults from these fields).

Layout of a config file (all tables optional; see config/*.toml for commented examples):

    [monitor]          state_dir, poll_seconds, stale_after, stuck_repeats, bell, baseline,
                       shared_group, audit_anchor_file, audit_anchor_syslog,
                       audit_anchor_every, audit_key_file
    [alarms]           priorities, hook, hook_timeout, reasons, flood_alarms, flood_window,
                       shelve_max
    [plant]            url, line (the central database this line forwards to, and its name)
    [[feed]]           paths, layout, delimiter, decimal, encoding, time_column, name_column,
                       value_column
    [[characteristic]] name, column, unit, lsl, usl, target, subgroup_size, dispersion, baseline,
                       center, sigma, rules, run_lengths, reasons, reaction_plan, reaction_plans,
                       clear_after, decimals, subgroup_by, subgroup_window, subgroup_timeout,
                       chart, count_column, size_column, result_column, fail_values,
                       pass_values, ewma = { lambda, width },
                       cusum = { k, h, headstart }, phase_by, practical_share

Each table's keys are the fields of its record below, by the same names.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from linewatch.config.choices import AttributeChart, DecimalMark, Delimiter, Dispersion, Layout
from linewatch.domain.alarm_states import DEFAULT_PRIORITIES
from linewatch.engine.episodes import DEFAULT_CLEAR_AFTER
from linewatch.engine.rulebook import DEFAULT_RULES, parse_rule_list

DEFAULT_WATCH_BASELINE = 25
DEFAULT_STALE_AFTER = 600.0
DEFAULT_STUCK_REPEATS = 10
DEFAULT_FLOOD_ALARMS = 10  # more than this many alarms in the flood window is a flood
DEFAULT_FLOOD_WINDOW = 600.0  # (ISA-18.2 guidance: about 10 alarms in 10 minutes, from memory)
DEFAULT_SHELVE_MAX = 12 * 3600.0
DEFAULT_ANCHOR_EVERY = 100
DEFAULT_HOOK_TIMEOUT = 5.0
DEFAULT_SUBGROUP_TIMEOUT = 300.0  # a live subgroup by sample id closes this long after its last row
# what a pass/fail tester writes (compared without regard to case; common practice, our list)
DEFAULT_FAIL_VALUES = ("FAIL", "NG", "NOK", "0", "false")
DEFAULT_PASS_VALUES = ("PASS", "OK", "GO", "1", "true")


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
    dispersion: Dispersion | None = None  # None: range for n <= 9, stdev for n >= 10
    baseline: int | None = None
    center: float | None = None
    sigma: float | None = None
    rules: list[str] = field(default_factory=lambda: parse_rule_list(DEFAULT_RULES))
    run_lengths: dict[str, int] = field(default_factory=dict)
    reasons: list[str] = field(default_factory=list)  # empty: the alarm policy's defaults
    reaction_plan: str = ""
    reaction_plans: dict[str, str] = field(default_factory=dict)
    clear_after: int = DEFAULT_CLEAR_AFTER
    decimals: int | None = None  # None: from the tolerance or σ (figures.reading_decimals)
    # detector parameters by option name (engine.rulebook.DETECTOR_OPTIONS); absent: defaults
    ewma: dict[str, float] = field(default_factory=dict)
    cusum: dict[str, float] = field(default_factory=dict)
    # subgroups: `subgroup_size` consecutive data rows, or rows with one value of the column
    # `subgroup_by`, or rows in one clock window of `subgroup_window` seconds (one of the three)
    subgroup_by: str | None = None
    subgroup_window: float | None = None
    subgroup_timeout: float = DEFAULT_SUBGROUP_TIMEOUT
    # attribute data: counts per row (`count_column`, with `size_column` the units inspected)
    # or one pass/fail result per part (`result_column`); `chart` None: the default for the form
    chart: AttributeChart | None = None
    count_column: str | None = None
    size_column: str | None = None
    result_column: str | None = None
    fail_values: list[str] = field(default_factory=lambda: list(DEFAULT_FAIL_VALUES))
    pass_values: list[str] = field(default_factory=lambda: list(DEFAULT_PASS_VALUES))
    phase_by: str | None = None  # check: a column whose every change of value starts a phase
    practical_share: float = 10.0  # percent of the tolerance a change must take to matter

    @property
    def sizes_vary(self) -> bool:
        """Subgroups by sample id or clock window: their sizes follow the data."""
        return self.subgroup_by is not None or self.subgroup_window is not None

    @property
    def effective_dispersion(self) -> Dispersion:
        """range for n ≤ 9, stdev for n ≥ 10 (common practice) unless set explicitly; stdev
        when sizes follow the data (common practice for varying sizes)."""
        if self.dispersion:
            return self.dispersion
        if self.sizes_vary:
            return "stdev"
        return "range" if self.subgroup_size <= 9 else "stdev"

    @property
    def is_attribute(self) -> bool:
        """Counts or pass/fail results rather than measured values."""
        return self.count_column is not None or self.result_column is not None

    @property
    def effective_chart(self) -> AttributeChart | None:
        """The attribute chart: as set, else p for results and for counts with sizes, c for
        counts without; None for measured values."""
        if not self.is_attribute:
            return None
        if self.chart:
            return self.chart
        return "c" if self.count_column is not None and self.size_column is None else "p"


@dataclass(slots=True)
class FeedConfig:
    """A set of log files (paths may be globs) and how their rows are laid out."""

    paths: list[str]
    layout: Layout = "wide"
    delimiter: Delimiter = "auto"
    decimal: DecimalMark = "."
    encoding: str = "utf-8"
    time_column: str | None = None
    name_column: str = "characteristic"
    value_column: str = "value"


@dataclass(slots=True)
class AlarmConfig:
    """How alarms are ranked and announced."""

    priorities: dict[str, int] = field(default_factory=lambda: dict(DEFAULT_PRIORITIES))
    hook: list[str] = field(default_factory=list)
    hook_timeout: float = DEFAULT_HOOK_TIMEOUT
    reasons: list[str] = field(default_factory=list)  # empty: the alarm policy's defaults
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
class PlantConfig:
    """The central database this line forwards to (`LINEWATCH_PLANT_URL` overrides `url`) and
    the line's name there."""

    url: str | None = None
    line: str | None = None


@dataclass(slots=True)
class Config:
    """The whole configuration; `source` is the file it came from (or '' for defaults)."""

    source: str = ""
    digest: str = ""
    monitor: MonitorConfig = field(default_factory=MonitorConfig)
    alarms: AlarmConfig = field(default_factory=AlarmConfig)
    feeds: list[FeedConfig] = field(default_factory=list)
    characteristics: list[CharacteristicConfig] = field(default_factory=list)
    plant: PlantConfig = field(default_factory=PlantConfig)

    def characteristic(self, name: str) -> CharacteristicConfig | None:
        """The characteristic called `name`, if declared."""
        for c in self.characteristics:
            if c.name == name:
                return c
        return None
