"""Each command's options as one typed, frozen record; the fields are the parser's destinations
by the same names (a test holds the two equal), and their defaults are THE defaults: the parser
gives none, and the dispatcher in `cli.main` fills a field the command line left out with its
default here. Commands get one of these, never parsed arguments, so a command that runs another
(the bare `linewatch`, `demo`) just builds the other's record. A record refuses impossible
numbers when it is made (LinewatchError naming the option), whoever makes it."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from linewatch.config.choices import (
    CheckFormat,
    ExportFormat,
    PhaseLimits,
    RecordFormat,
    ReportFormat,
)
from linewatch.config.overrides import ChartOverrides
from linewatch.domain.errors import LinewatchError


def _check_positive(option: str, value: float, unit: str = "") -> None:
    """`value` is a finite number above 0, else a LinewatchError naming `option`."""
    if not math.isfinite(value):
        raise LinewatchError(f"{option} must be a finite number, got {value}")
    if not value > 0:
        raise LinewatchError(f"{option} must be more than 0{unit}, got {value}")


def _check_pace(seed: int, speed: float) -> None:
    """A simulated line's seed and clock speed: a seed of 0 or more, a finite speed above 0."""
    _check_positive("--speed", speed)
    if seed < 0:
        raise LinewatchError(f"--seed must be 0 or more, got {seed}")


@dataclass(frozen=True, slots=True, kw_only=True)
class DefaultOptions:
    """`linewatch` alone: open ./linewatch.toml (it has no options)."""


@dataclass(frozen=True, slots=True, kw_only=True)
class CheckOptions:
    """`linewatch check LOG...`, or `linewatch check --compare-rules SET[;SET...]`"""

    logs: tuple[str, ...] = ()
    config: str | None = None
    chart: ChartOverrides = field(default_factory=ChartOverrides)
    format: CheckFormat = "text"
    output: str | None = None  # write the text, records or page here instead of stdout
    phase_by: str | None = None  # a column whose every change of value starts a phase
    phase_at: str | None = None  # plotted points that start a phase, comma-separated
    limits: PhaseLimits = "per-phase"
    versus: str | None = None  # a setting column to regress the characteristic on
    at: float | None = None  # predict at this setting
    target: float | None = None  # the setting that puts the mean here
    degree: int = 1
    practical_percent: float | None = None  # share of the tolerance that matters
    points: bool = False  # jsonl: one record per plotted point
    compare_rules: str | None = None  # rule sets whose detection power to print side by side

    def __post_init__(self) -> None:
        if self.compare_rules is None and not self.logs:
            raise LinewatchError("check needs at least one LOG (or --compare-rules SET;SET)")
        if self.compare_rules is not None and self.logs:
            raise LinewatchError("--compare-rules reads no log: leave the LOGs out")
        if self.phase_by is not None and self.phase_at is not None:
            raise LinewatchError("--phase-by and --phase-at go one at a time")
        self.phase_points()
        if self.degree not in (1, 2):
            raise LinewatchError(f"--degree must be 1 or 2, got {self.degree}")
        for option, value in (("--at", self.at), ("--target", self.target)):
            if value is not None and not math.isfinite(value):
                raise LinewatchError(f"{option} must be a finite number, got {value}")
        if (self.at is not None or self.degree != 1) and self.versus is None:
            raise LinewatchError("--at and --degree need --versus COLUMN (the setting)")
        if self.practical_percent is not None and not 0 < self.practical_percent <= 100:
            raise LinewatchError("--practical-share must be more than 0 and at most 100 "
                                 f"(percent of the tolerance), got {self.practical_percent}")

    def phase_points(self) -> tuple[int, ...]:
        """The plotted points --phase-at names (ascending, no repeats)."""
        if not self.phase_at:
            return ()
        try:
            points = sorted({int(p) for p in self.phase_at.split(",") if p.strip()})
        except ValueError:
            raise LinewatchError(f"--phase-at takes plotted point numbers separated by "
                                 f"commas, got {self.phase_at!r}") from None
        if any(p < 1 for p in points):
            raise LinewatchError("--phase-at points must be 1 or more (point 0 always starts "
                                 "the first phase)")
        return tuple(points)


@dataclass(frozen=True, slots=True, kw_only=True)
class WatchOptions:
    """`linewatch watch [PATTERN...]`"""

    patterns: tuple[str, ...] = ()
    config: str | None = None
    chart: ChartOverrides = field(default_factory=ChartOverrides)
    state_dir: str | None = None
    poll: float | None = None
    no_ui: bool = False
    format: RecordFormat = "text"
    no_bell: bool = False

    def __post_init__(self) -> None:
        if self.poll is not None and not (math.isfinite(self.poll) and self.poll >= 0):
            raise LinewatchError(f"--poll must be 0 or more seconds, got {self.poll}")


@dataclass(frozen=True, slots=True, kw_only=True)
class StoreOptions:
    """Where a shell command finds an existing store: --state-dir, or the config's."""

    state_dir: str | None = None
    config: str | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class AlarmListOptions(StoreOptions):
    """`linewatch alarms list`"""

    all: bool = False
    format: RecordFormat = "text"


@dataclass(frozen=True, slots=True, kw_only=True)
class AckOptions(StoreOptions):
    """`linewatch alarms ack [ID...] --reason TEXT`"""

    ids: tuple[int, ...] = ()
    characteristic: str | None = None
    reason: str
    note: str = ""


@dataclass(frozen=True, slots=True, kw_only=True)
class ShelveOptions(StoreOptions):
    """`linewatch alarms shelve [ID] --for DURATION --reason TEXT`"""

    id: int | None = None
    characteristic: str | None = None
    duration: str
    reason: str


@dataclass(frozen=True, slots=True, kw_only=True)
class UnshelveOptions(StoreOptions):
    """`linewatch alarms unshelve ID`"""

    id: int


AlarmsOptions = AlarmListOptions | AckOptions | ShelveOptions | UnshelveOptions


@dataclass(frozen=True, slots=True, kw_only=True)
class BaselineOptions(StoreOptions):
    """`linewatch baseline CHARACTERISTIC (--at INDEX | --now) --reason TEXT`"""

    characteristic: str
    at: int | None = None
    now: bool = False
    reason: str


@dataclass(frozen=True, slots=True, kw_only=True)
class VerifyOptions(StoreOptions):
    """`linewatch audit verify`"""

    anchor: tuple[str, ...] = ()
    key: str | None = None
    plant: str | None = None  # verify a line's chain in the central database instead
    line: str | None = None  # ... the line's name there (with --plant)


@dataclass(frozen=True, slots=True, kw_only=True)
class ExportOptions(StoreOptions):
    """`linewatch audit export`"""

    since: str | None = None
    format: ExportFormat = "jsonl"


AuditOptions = VerifyOptions | ExportOptions


@dataclass(frozen=True, slots=True, kw_only=True)
class ReportOptions(StoreOptions):
    """`linewatch report`"""

    since: str | None = None  # default: the last 8h (report.DEFAULT_SPAN)
    from_: str | None = None
    to: str | None = None
    format: ReportFormat = "markdown"
    output: str | None = None


@dataclass(frozen=True, slots=True, kw_only=True)
class PlantInitOptions:
    """`linewatch plant init [URL]`"""

    url: str | None = None  # default: LINEWATCH_PLANT_URL


@dataclass(frozen=True, slots=True, kw_only=True)
class PlantBoardOptions:
    """`linewatch plant board [--url URL] --no-ui`"""

    url: str | None = None  # default: LINEWATCH_PLANT_URL
    no_ui: bool = False
    format: RecordFormat = "text"


@dataclass(frozen=True, slots=True, kw_only=True)
class SimulateOptions:
    """`linewatch simulate --out DIR`"""

    out: str
    rate: float = 5.0
    speed: float = 1.0
    seed: int = 1
    duration: str | None = None

    def __post_init__(self) -> None:
        _check_positive("--rate", self.rate, " rows per second")
        _check_pace(self.seed, self.speed)


@dataclass(frozen=True, slots=True, kw_only=True)
class DemoOptions:
    """`linewatch demo`"""

    keep: bool = False
    seed: int = 1
    speed: float = 1.0

    def __post_init__(self) -> None:
        _check_pace(self.seed, self.speed)


DEFAULT_BIND = "127.0.0.1:8765"


@dataclass(frozen=True, slots=True, kw_only=True)
class ServeOptions:
    """`linewatch serve (-c CONFIG | --plant URL)`"""

    config: str | None = None
    plant: str | None = None
    state_dir: str | None = None
    bind: str = DEFAULT_BIND
    allow_actions: bool = False
    users: str | None = None
    public_url: str | None = None
    trust_forwarded: bool = False

    def __post_init__(self) -> None:
        if self.allow_actions and not self.users:
            raise LinewatchError("--allow-actions needs --users FILE: whoever acts from a "
                                 "browser must sign in, so the audit trail can name them")
        if self.public_url is not None and not self.public_url.startswith(
                ("http://", "https://")):
            raise LinewatchError(f"--public-url must start with http:// or https://, "
                                 f"got {self.public_url!r}")


@dataclass(frozen=True, slots=True, kw_only=True)
class BrowserUserAddOptions:
    """`linewatch browser-user add NAME --users FILE`"""

    name: str
    users: str
    password_stdin: bool = False


@dataclass(frozen=True, slots=True, kw_only=True)
class BrowserUserRemoveOptions:
    """`linewatch browser-user remove NAME --users FILE`"""

    name: str
    users: str


@dataclass(frozen=True, slots=True, kw_only=True)
class BrowserUserListOptions:
    """`linewatch browser-user list --users FILE`"""

    users: str
