"""What the faces show: plain snapshots of the line that the monitor builds and the UI renders.

The monitor (or an attached viewer reading the store) fills these; the Textual screen and the
headless printer only read them. Actions go the other way through the `LineActions` protocol.
Nothing here imports textual or rich.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Protocol

# The alarm kinds, states and the alarm record live in the domain; the faces read them here.
from linewatch.domain.alarm_states import OPEN_STATES as OPEN_STATES
from linewatch.domain.alarm_states import AlarmKind as AlarmKind
from linewatch.domain.alarm_states import AlarmState as AlarmState
from linewatch.domain.records import AlarmView as AlarmView
from linewatch.present.detector_view import DetectorChartView as DetectorChartView
from linewatch.present.power_view import PowerTable as PowerTable

UNACKNOWLEDGED = AlarmState.UNACKNOWLEDGED
ACKNOWLEDGED = AlarmState.ACKNOWLEDGED
RETURNED_UNACKNOWLEDGED = AlarmState.RETURNED_UNACKNOWLEDGED
SHELVED = AlarmState.SHELVED
NORMAL = AlarmState.NORMAL

# Overall state of a characteristic on the overview, worst first.
STATE_ALARM = "alarm"  # an unacknowledged alarm
STATE_WATCH = "watch"  # acknowledged but still active alarm, or Cpk below 1.00
STATE_STALE = "stale"  # no new row for stale_after, or a stuck gauge
STATE_REFUSED = "refused"  # this phase's limits were refused (σ̂ = 0, values too extreme)
STATE_LEARNING = "learning"  # collecting baseline points, no limits yet
STATE_OK = "ok"


@dataclass(slots=True)
class ChartView:
    """One chart of one characteristic: recent plotted points with their limits history."""

    chart: str
    values: list[float] = field(default_factory=list)
    indices: list[int] = field(default_factory=list)
    # rule ids that fired at each point ("" when none), aligned with `values`
    rules: list[str] = field(default_factory=list)
    center: float | None = None
    ucl: float | None = None
    lcl: float | None = None
    sigma: float | None = None
    # indices (into the chart's full series) where a new phase of limits starts
    phase_starts: list[int] = field(default_factory=list)
    # every phase's limits, oldest first: (start index, CL, UCL, LCL, sigma of the statistic)
    phase_limits: list[tuple[int, float, float, float, float]] = field(default_factory=list)
    # the letter marking each point's most urgent kind of pattern ("" none), aligned with
    # `values` (present.marks), and what each rule that fired here means: id -> (mark, words)
    marks: list[str] = field(default_factory=list)
    legend: dict[str, tuple[str, str]] = field(default_factory=dict)
    # limits step with each subgroup's size: `phase_limits` then holds one entry wherever the
    # limits change, drawn as steps (phase separators come from `phase_starts` only)
    steps: bool = False
    sizes: list[float] = field(default_factory=list)  # each point's n (stepped charts)


@dataclass(frozen=True, slots=True)
class AttributeFigures:
    """An attribute characteristic on the board and in the close-up: its newest proportion
    (or rate) against that point's limits, and the overall figure with its exact 95%
    interval (Cp and Cpk do not apply)."""

    chart: str  # p, np, c, u, laney-p, laney-u
    what: str  # "proportion nonconforming" or "defects per unit"
    last: float | None  # the newest point's proportion or rate
    center: float | None
    ucl: float | None
    lcl: float | None
    overall: float | None = None
    lower95: float | None = None
    upper95: float | None = None
    ppm: float | None = None
    events: int = 0
    exposure: float = 0.0
    not_applicable: str = ""  # why Cp/Cpk are not shown


@dataclass(slots=True)
class PhaseStats:
    """Summary figures of one phase of limits (for the detail table)."""

    phase: int
    start_index: int
    n: int
    mean: float | None
    stdev: float | None
    ci95: tuple[float, float] | None
    cp: float | None
    cpk: float | None
    cpk_ci95: tuple[float, float] | None
    ppm_out: float | None  # from the overall SD, like Pp and Ppk
    pp: float | None = None
    ppk: float | None = None


@dataclass(frozen=True, slots=True)
class BoxFigures:
    """The box plot of recent readings: quartiles, Tukey's 1.5·IQR whiskers, the outliers."""

    points: int
    q1: float
    median: float
    q3: float
    whisker_low: float
    whisker_high: float
    outliers: tuple[float, ...] = ()  # ascending
    stdev: float | None = None


@dataclass(frozen=True, slots=True)
class TrendFigures:
    """A least-squares line over the last plotted points and where it leads."""

    points: int
    slope: float | None = None
    r2: float | None = None
    adj_r2: float | None = None
    p_value: float | None = None
    points_to_spec: int | None = None  # None: no significant trend towards a spec limit


@dataclass(frozen=True, slots=True)
class CloseUpFigures:
    """What the close-up shows beside its charts, computed where the detail is read."""

    box: BoxFigures | None
    box_of: str  # what the box plot is of: "readings", "subgroup means (n=5)"
    box_points: int  # how many values it is drawn from (also when too few for a box)
    trend: TrendFigures


@dataclass(slots=True)
class CharacteristicView:
    """Everything the overview row and the detail screen need about one characteristic."""

    name: str
    unit: str = ""
    state: str = STATE_LEARNING
    last_value: float | None = None
    decimals: int | None = None  # how readings are shown (figures.reading_decimals)
    last_row_age: float | None = None  # seconds since the newest row arrived
    lsl: float | None = None
    usl: float | None = None
    subgroup_size: int = 1
    points: int = 0
    rejected: int = 0
    baseline_needed: int = 0  # plotted points still needed before limits exist
    limits_refused: str = ""  # why this phase's limits were refused ("" when they were not)
    location: ChartView | None = None
    dispersion: ChartView | None = None
    recent_mean: float | None = None
    recent_sigma: float | None = None  # within sigma of individual values
    margin_sigma: float | None = None  # distance of recent mean to the nearer spec limit, in σ
    cpk: float | None = None
    cpk_lower95: float | None = None
    open_alarms: int = 0
    phases: list[PhaseStats] = field(default_factory=list)
    stale: bool = False
    stuck: bool = False
    seconds_per_point: float | None = None  # mean time between recent plotted points
    recent_values: list[float] = field(default_factory=list)  # latest individual readings
    pending_phase_start: int | None = None  # a new phase was asked for; its limits are not in
    figures: CloseUpFigures | None = None  # box plot and trend, in a detail read only
    # the last two phases of limits compared (means and spread, and whether it matters), in words
    phase_comparison: str = ""
    attribute: AttributeFigures | None = None  # counts or pass/fail results (else None)
    # the EWMA / CUSUM charts and the rule set's detection power, in a detail read only
    detectors: list[DetectorChartView] = field(default_factory=list)
    power: PowerTable | None = None


@dataclass(slots=True)
class FeedView:
    """Health of one followed file."""

    file: str
    rows: int = 0
    rejected: int = 0
    rows_per_second: float = 0.0
    last_row_age: float | None = None
    rotations: int = 0
    truncations: int = 0
    stale: bool = False
    # following | warning | waiting | missing | unreadable | stale | no header | skipped |
    # bounded
    status: str = "following"
    last_rejects: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)  # the last warnings about the file
    unread: int = 0  # lines not read: the file has no header to go by (also in `rejected`)
    times_backwards: int = 0  # time stamps earlier than the row before (rows kept)
    times_unreadable: int = 0  # time stamps that cannot be read as a time (rows kept)
    times_note: str = ""  # both counts in words, as the feed events say them ("" when none)


@dataclass(slots=True)
class LineSnapshot:
    """The whole picture at one moment; `version` grows whenever anything changes."""

    version: int = 0
    title: str = "linewatch"
    role: str = "collector"  # collector | viewer
    characteristics: list[CharacteristicView] = field(default_factory=list)
    alarms: list[AlarmView] = field(default_factory=list)
    feeds: list[FeedView] = field(default_factory=list)
    catching_up: float | None = None  # fraction done while reading history, else None
    message: str = ""
    flood: int | None = None  # alarms annunciated in the flood window while in a flood
    flood_since: float | None = None
    flood_window: float = 600.0  # seconds the flood count is taken over
    problem: str = ""  # the collector's internal error, while it lasts ("" when none)
    plant_down_since: float | None = None  # the plant link is down since then (None: up/none)
    plant_waiting: int = 0  # entries the central database has not confirmed (while down)


class LineActions(Protocol):
    """What a face can ask of the monitor. Each call is safe from any thread; it may wait for
    the store, so a screen calls it from a worker thread. It raises
    `linewatch.domain.errors.LinewatchError` with a one-line message on bad input, and
    `StoreError` when the store is busy or gone."""

    def acknowledge(self, alarm_ids: list[int], reason: str, note: str = "") -> None: ...

    def acknowledge_characteristic(
        self, characteristic: str, reason: str, note: str = ""
    ) -> int: ...

    def shelve(self, alarm_id: int, seconds: float, reason: str) -> None: ...

    def unshelve(self, alarm_id: int) -> None: ...

    def new_baseline(self, characteristic: str, start_index: int, reason: str) -> None: ...


class SnapshotSource(Protocol):
    """Where a face gets its picture. `snapshot()` and `detail()` are thread-safe and read the
    store, so a screen calls them from a worker thread; they raise `StoreError` (a
    LinewatchError) or OSError when the store cannot be read. `subscribe` registers a callback
    called (from any thread, possibly often) with the new version whenever something changed,
    so the face can schedule a batched redraw instead of polling."""

    def snapshot(self) -> LineSnapshot: ...

    def detail(self, characteristic: str) -> CharacteristicView | None:
        """The characteristic with its full recent chart history, phases, statistics and the
        close-up's figures."""
        ...

    def subscribe(self, callback: Callable[[int], None]) -> None: ...
