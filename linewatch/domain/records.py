"""Plain records that flow one way through linewatch: bytes -> readings -> signals -> alarms.

They carry no behaviour and import nothing heavy, so every layer (feeds, engine, store, faces)
can share them.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from linewatch.domain.alarm_states import AlarmState

CHART_INDIVIDUALS = "individuals"
CHART_MOVING_RANGE = "moving-range"
CHART_XBAR = "xbar"
CHART_RANGE = "range"
CHART_STDEV = "stdev"
DISPERSION_CHARTS = (CHART_MOVING_RANGE, CHART_RANGE, CHART_STDEV)
# Attribute charts: proportion nonconforming, number nonconforming, defects, defects per unit,
# and Laney's p′ and u′ (limits widened by the between-subgroup variation).
CHART_P = "p"
CHART_NP = "np"
CHART_C = "c"
CHART_U = "u"
CHART_LANEY_P = "laney-p"
CHART_LANEY_U = "laney-u"
ATTRIBUTE_CHARTS = (CHART_P, CHART_NP, CHART_C, CHART_U, CHART_LANEY_P, CHART_LANEY_U)

# The largest magnitude a reading (or a configured centre, sigma or spec limit) may have.
# Squares of differences of two such values stay below 4e200, so sums of squares over any
# realistic count of points stay far below the float64 maximum of 1.8e308, and so do the
# products the drawing code forms (a value times a screen size); every real measurement, in
# any unit, is many orders of magnitude smaller. Past about 1.3e154 a square overflows to
# infinity and control limits become NaN: such a value is "out of range".
MAX_MAGNITUDE = 1e100


@dataclass(frozen=True, slots=True)
class Rejected:
    """A row that could not become a point, with file, 1-based line and the reason."""

    file: str
    line: int
    reason: str


@dataclass(frozen=True, slots=True)
class Notice:
    """Something about a file the user should know though no row is lost (a duplicate column
    name, a file with no header): file, 1-based line and the text, said once per file."""

    file: str
    line: int
    text: str
    kind: str = "warning"  # or "no-header": the file's lines cannot be read


@dataclass(frozen=True, slots=True)
class Limits:
    """Control limits of one chart; `sigma` is the standard deviation of the plotted statistic."""

    characteristic: str
    chart: str
    center: float
    ucl: float
    lcl: float
    sigma: float
    phase: int = 0
    start_index: int = 0


@dataclass(frozen=True, slots=True)
class FeedEvent:
    """Something happened to a followed file: appeared, vanished, rotated, truncated, stale, ..."""

    kind: str
    file: str
    detail: str = ""


@dataclass(frozen=True, slots=True)
class FileState:
    """Where reading of one file stopped: identity (device, inode, a fingerprint of its first
    bytes, ``"<n>:<sha256 of the first n bytes>"``) and the offset after the last whole line.
    The tailer produces it; the store keeps it in the same transaction as what was read."""

    path: str
    dev: int
    inode: int
    fingerprint: str
    offset: int
    next_line: int = 1
    # the column names the file is read under: its own header, or the one its path had before
    # when it began without one (kept so a restart reads such a file the same way)
    header: tuple[str, ...] | None = None


@dataclass(slots=True)
class AlarmView:
    """One alarm as the alarm list shows it."""

    id: int
    kind: str  # an AlarmKind
    characteristic: str
    chart: str
    rule: str
    description: str
    state: AlarmState
    priority: int
    raised_at: float  # epoch seconds
    first_index: int | None = None
    last_index: int | None = None
    acknowledged_by: str | None = None
    acknowledged_at: float | None = None
    reason: str | None = None
    note: str | None = None
    shelved_until: float | None = None
    reaction_plan: str = ""
    reasons: list[str] = field(default_factory=list)
    signals: int = 0  # signalling points over all episodes
    episodes: int = 1
    counts: str = ""  # per-rule counts in a few words ("we2 ×44 we3 ×37")
    active: bool = True  # the condition is present now
    below_lsl: int | None = None
    above_usl: int | None = None
