"""An invented tube-extrusion line, as a deterministic stream of log rows with special causes.

Three gauges write their own logs:

- ``od_gauge.csv``: a laser gauge's outer diameter (mm), comma CSV, read in subgroups of 5;
- ``wall.csv``: an older ultrasonic station's wall thickness (mm), semicolon CSV with a decimal
  comma, charted as individuals;
- ``fill_scale.jsonl``: the packing scale's fill weight (g) of each bag of cut tubes, JSON lines.

`generate` is a pure function of (scenario, seed, rate, start time): it yields `Header`, `Row`,
`Rotate` and `Note` actions in simulated-time order and never sleeps or touches a file, so the
same seed gives the same rows and the tests can read the stream without waiting. The pacing and
writing loop lives in `linewatch.simulation.writer`.

Timeline: each gauge first gets `history_points` plotted points of in-control history stamped
before the start (written at once, so limits can be estimated immediately), then the live part
repeats a schedule of special causes every `cycle` simulated seconds. The history's noise is
calibrated (centred, and scaled so its range-based σ estimate is the gauge's σ), so limits
estimated from it match the scenario whatever the seed and the causes stand out as planned.
"""

from __future__ import annotations

import heapq
import json
import math
import re
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import datetime, timedelta

import numpy as np

# Kinds of special cause a `Cause` can inject.
SHIFT = "shift"  # the mean steps by `size` σ for the window
DRIFT = "drift"  # the mean moves linearly from 0 to `size` σ across the window
SPREAD = "spread"  # σ is multiplied by `size` (> 1: a burst of extra variation)
HUG = "hug"  # σ is multiplied by `size` (< 1: points hug the centre line)
STUCK = "stuck"  # the gauge repeats the first value of the window
SILENT = "silent"  # the gauge writes nothing; when it comes back it writes its header again
JUNK = "junk"  # after every `size`-th row, one junk row (text, empty, noise, bad field count)
ROTATE = "rotate"  # at the window start, the log is renamed to .1 and a new one begins

VALUE_KINDS = (SHIFT, DRIFT, SPREAD, HUG, STUCK)

# Formats a gauge can write.
CSV_COMMA = "csv"
CSV_SEMICOLON = "csv-semicolon"  # ';' delimiter and decimal comma
JSON_LINES = "jsonl"


@dataclass(frozen=True, slots=True)
class Gauge:
    """One measuring station and the log it writes."""

    key: str
    file: str
    fmt: str
    column: str
    mean: float
    sigma: float
    decimals: int
    every: int = 1  # reads once per `every` base intervals (1 / rate)
    subgroup: int = 1  # consecutive readings that form one plotted point
    id_column: str = "coil"


@dataclass(frozen=True, slots=True)
class Cause:
    """A special cause on one gauge during [start, end) simulated seconds of each cycle."""

    gauge: str
    kind: str
    start: float
    end: float
    size: float = 0.0
    label: str = ""


@dataclass(frozen=True, slots=True)
class Scenario:
    """Gauges, the schedule of causes and how much in-control history to write first."""

    gauges: tuple[Gauge, ...]
    causes: tuple[Cause, ...]
    cycle: float = 240.0
    history_points: int = 60
    coil_seconds: float = 60.0

    def gauge(self, key: str) -> Gauge:
        """The gauge called `key`."""
        for g in self.gauges:
            if g.key == key:
                return g
        raise KeyError(key)


@dataclass(frozen=True, slots=True)
class Header:
    """Write the log's header line (a new file, or a gauge restarting)."""

    t: float
    file: str
    data: bytes


@dataclass(frozen=True, slots=True)
class Row:
    """One line of a log. `value` is None for junk; `split` > 0 writes it in two pieces."""

    t: float
    file: str
    data: bytes
    gauge: str
    value: float | None
    index: int  # 0-based reading number of this gauge (junk rows: the reading they follow)
    split: int = 0


@dataclass(frozen=True, slots=True)
class Rotate:
    """Rename the log to `<file>.1` (shifting an older `.1` to `.2`) and start a new one."""

    t: float
    file: str


@dataclass(frozen=True, slots=True)
class Note:
    """A special cause starts or ends: for the operator's console, not for the logs."""

    t: float
    gauge: str
    text: str


Action = Header | Row | Rotate | Note

# The invented line: 12 mm tube, 1.5 mm wall, bags of 500 g. The first clear signal comes
# about 15 s into the live part (the diameter's material lot change).
EXTRUSION_LINE = Scenario(
    gauges=(
        Gauge("od", "od_gauge.csv", CSV_COMMA, "od_mm", 12.000, 0.012, 3, every=1, subgroup=5),
        Gauge("wall", "wall.csv", CSV_SEMICOLON, "wall_mm", 1.500, 0.010, 3, every=2),
        Gauge("fill", "fill_scale.jsonl", JSON_LINES, "fill_g", 500.5, 1.2, 1, every=3,
              id_column="bag"),
    ),
    causes=(
        Cause("od", SHIFT, 15, 75, 1.5, "material lot change: diameter steps up 1.5σ"),
        Cause("wall", DRIFT, 20, 80, 2.5, "die wear: wall creeps up 2.5σ over a minute"),
        Cause("fill", SPREAD, 30, 50, 3.0, "loose auger: fill weight scatters 3x"),
        Cause("fill", STUCK, 70, 100, 0.0, "scale display frozen: one value repeats"),
        Cause("wall", HUG, 100, 150, 0.2, "station averaging readings: points hug the centre"),
        Cause("od", SILENT, 150, 190, 0.0, "diameter gauge stops writing (stale feed)"),
        Cause("wall", JUNK, 110, 170, 9, "wall station sends junk rows"),
        Cause("fill", JUNK, 120, 180, 7, "scale sends junk rows"),
        Cause("od", JUNK, 190, 230, 23, "diameter gauge sends junk rows"),
        Cause("od", ROTATE, 200, 200, 0.0, "diameter log rotated to od_gauge.csv.1"),
    ),
)

SPLIT_PROBABILITY = 0.03  # share of rows written in two pieces (a partial line for a while)


def header_bytes(g: Gauge) -> bytes:
    """The header line of the gauge's log (JSON lines have none: b'')."""
    if g.fmt == CSV_COMMA:
        return f"time,{g.id_column},{g.column}\n".encode()
    if g.fmt == CSV_SEMICOLON:
        return f"time;{g.id_column};{g.column}\n".encode()
    return b""


def format_row(g: Gauge, stamp: str, ident: str, value: float) -> bytes:
    """One good row of the gauge's log, newline included."""
    text = f"{value:.{g.decimals}f}"
    if g.fmt == CSV_COMMA:
        return f"{stamp},{ident},{text}\n".encode()
    if g.fmt == CSV_SEMICOLON:
        return f"{stamp};{ident};{text.replace('.', ',')}\n".encode()
    record = {"time": stamp, g.id_column: ident, g.column: round(value, g.decimals)}
    return (json.dumps(record) + "\n").encode()


def _junk_row(g: Gauge, stamp: str, ident: str, kind: int, rng: np.random.Generator) -> bytes:
    """A row no reader should accept, of one of four kinds (cycled by `kind`)."""
    kind %= 4
    if kind == 3:  # binary noise: invalid UTF-8 and no digits-only text, no newline inside
        noise = bytes(int(b) for b in rng.integers(0x80, 0x100, size=12))
        return b"\xff\xfe" + noise + b"\n"
    if g.fmt == JSON_LINES:
        if kind in (0, 1):  # a text value, then an empty one
            bad = "ERR" if kind == 0 else None
            return (json.dumps({"time": stamp, g.id_column: ident, g.column: bad}) + "\n").encode()
        return f'{{"time": "{stamp}", "{g.column}": 50\n'.encode()  # cut-off object
    sep = ";" if g.fmt == CSV_SEMICOLON else ","
    if kind == 0:
        return f"{stamp}{sep}{ident}{sep}OVERRANGE\n".encode()
    if kind == 1:
        return f"{stamp}{sep}{ident}{sep}\n".encode()
    return f"{stamp}{sep}{ident}\n".encode()  # a field missing


def calibrated_noise(
    rng: np.random.Generator, points: int, subgroup: int, tries: int = 2000
) -> np.ndarray:
    """Standard normal noise for `points` plotted points of in-control history: centred, scaled
    so the usual σ estimate (mean moving range / d2(2), or mean subgroup range / d2(n)) is
    exactly 1, and drawn again until no rule of the rulebook fires on it (a quiet start, so the
    first alarms of a demo are the scheduled causes)."""
    z = np.zeros(points * subgroup)
    for _ in range(tries):
        z = _calibrate(rng.standard_normal(points * subgroup), subgroup)
        if _quiet(z, subgroup):
            break
    return z


def _calibrate(z: np.ndarray, subgroup: int) -> np.ndarray:
    from linewatch.engine.constants import d2

    z = z - z.mean()
    if subgroup > 1:
        sigma = float(np.ptp(z.reshape(-1, subgroup), axis=1).mean()) / d2(subgroup)
    else:
        sigma = float(np.abs(np.diff(z)).mean()) / d2(2)
    return z / sigma


def _quiet(z: np.ndarray, subgroup: int) -> bool:
    """No rule fires on the history's charts, even with σ estimated 10 % off either way."""
    from linewatch.engine.constants import d2, d4_upper
    from linewatch.engine.rulebook import RULES
    from linewatch.engine.rules import evaluate

    if subgroup > 1:
        groups = z.reshape(-1, subgroup)
        location, scale = groups.mean(axis=1), 1.0 / math.sqrt(subgroup)
        spread, spread_limit = np.ptp(groups, axis=1), d4_upper(subgroup) * d2(subgroup)
    else:
        location, scale = z, 1.0
        spread, spread_limit = np.abs(np.diff(z)), d4_upper(2) * d2(2)
    for factor in (0.9, 1.1):
        if np.any(spread > spread_limit * factor):
            return False
        if any(evaluate(spec, location, 0.0, scale * factor).any() for spec in RULES.values()):
            return False
    return True


def _in_window(c: Cause, tc: float) -> bool:
    return c.start <= tc < c.end


def _crossed(at: float, before: float, t: float, cycle: float) -> bool:
    """Whether cycle-relative time `at` fell in (before, t] for absolute time t ≥ 0."""
    if t < 0:
        return False
    base = math.floor(t / cycle) * cycle
    for k in (base, base - cycle):
        when = k + at
        if when >= 0 and before < when <= t:
            return True
    return False


def process_state(g: Gauge, active: list[Cause], tc: float) -> tuple[float, float]:
    """The gauge's process mean and σ at cycle time `tc` under the active causes."""
    mean, sigma = g.mean, g.sigma
    for c in active:
        if c.kind == SHIFT:
            mean += c.size * g.sigma
        elif c.kind == DRIFT:
            mean += c.size * g.sigma * (tc - c.start) / (c.end - c.start)
        elif c.kind in (SPREAD, HUG):
            sigma *= c.size
    return mean, sigma


def _stamp(start: datetime, t: float) -> str:
    return (start + timedelta(seconds=t)).isoformat(timespec="milliseconds")


# What `_stamp` writes: ISO 8601 with milliseconds and the UTC offset.
_STAMP_PATTERN = re.compile(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(?:\.\d+)?[+-]\d\d:\d\d")


def latest_stamp(text: str) -> datetime | None:
    """The newest time stamp the simulator wrote in `text` (e.g. the tail of a log)."""
    stamps = []
    for found in _STAMP_PATTERN.findall(text):
        try:
            stamps.append(datetime.fromisoformat(found))
        except ValueError:
            continue
    return max(stamps) if stamps else None


def gauge_actions(
    scenario: Scenario, g: Gauge, order: int, seed: int, rate: float, start: datetime
) -> Iterator[tuple[float, int, int, Action]]:
    """The endless, time-ordered actions of one gauge, keyed for merging with the others."""
    interval = g.every / rate
    rng = np.random.default_rng([seed, order, 0])  # values
    junk_rng = np.random.default_rng([seed, order, 1])
    split_rng = np.random.default_rng([seed, order, 2])
    causes = [c for c in scenario.causes if c.gauge == g.key]
    n_history = scenario.history_points * g.subgroup
    seq = 0

    def key(t: float, action: Action) -> tuple[float, int, int, Action]:
        nonlocal seq
        seq += 1
        return (t, order, seq, action)

    first = -n_history
    history = calibrated_noise(rng, scenario.history_points, g.subgroup)
    yield key(first * interval - 1e-6, Header(first * interval - 1e-6, g.file, header_bytes(g)))
    stuck_value: float | None = None
    junk_kind = 0
    since_junk = 0
    index = 0
    k = first
    while True:
        t = k * interval
        before = (k - 1) * interval
        k += 1
        tc = t % scenario.cycle if t >= 0 else -1.0
        for c in causes:
            if _crossed(c.start, before, t, scenario.cycle):
                yield key(t, Note(t, g.key, f"start: {c.label}"))
                if c.kind == ROTATE:
                    yield key(t, Rotate(t, g.file))
                    yield key(t, Header(t, g.file, header_bytes(g)))
            if c.kind != ROTATE and _crossed(c.end, before, t, scenario.cycle):
                yield key(t, Note(t, g.key, f"end: {c.label}"))
                if c.kind == SILENT:
                    yield key(t, Header(t, g.file, header_bytes(g)))
        active = [c for c in causes if tc >= 0 and _in_window(c, tc)]
        z = float(history[k - 1 - first]) if k - 1 < 0 else float(rng.standard_normal())
        mean, sigma = process_state(g, active, tc)
        value = round(mean + sigma * z, g.decimals)
        if any(c.kind == STUCK for c in active):
            if stuck_value is None:
                stuck_value = value
            value = stuck_value
        else:
            stuck_value = None
        if any(c.kind == SILENT for c in active):
            continue
        stamp = _stamp(start, t)
        ident = _identity(scenario, g, t, index)
        data = format_row(g, stamp, ident, value)
        split = 0
        if split_rng.random() < SPLIT_PROBABILITY:
            split = int(split_rng.integers(1, len(data) - 1))
        yield key(t, Row(t, g.file, data, g.key, value, index, split))
        index += 1
        junk = [c for c in active if c.kind == JUNK]
        if junk:
            since_junk += 1
            if since_junk >= int(junk[0].size):
                since_junk = 0
                data = _junk_row(g, stamp, ident, junk_kind, junk_rng)
                junk_kind += 1
                yield key(t, Row(t, g.file, data, g.key, None, index - 1))
        else:
            since_junk = 0


def _identity(scenario: Scenario, g: Gauge, t: float, index: int) -> str:
    """Coil number for the line gauges (one coil per `coil_seconds`), bag number for the scale."""
    if g.id_column == "coil":
        return f"C{4100 + math.floor(t / scenario.coil_seconds):05d}"
    return f"B{index + 1:06d}"


def generate(
    seed: int,
    rate: float,
    start: datetime,
    scenario: Scenario = EXTRUSION_LINE,
) -> Iterator[Action]:
    """Every gauge's actions merged in simulated-time order (endless; take what you need).

    `rate` is the readings per simulated second of a gauge with `every == 1`; `start` is the
    time stamped on the first live row (history is stamped before it).
    """
    if not rate > 0:
        raise ValueError("rate must be more than 0")
    streams = [
        gauge_actions(scenario, g, i, seed, rate, start) for i, g in enumerate(scenario.gauges)
    ]
    for _t, _order, _seq, action in heapq.merge(*streams):
        yield action


@dataclass(slots=True)
class Readings:
    """Values and times of one gauge's good rows, gathered from a generated stream (for tests)."""

    times: list[float] = field(default_factory=list)
    values: list[float] = field(default_factory=list)

    def array(self) -> np.ndarray:
        return np.asarray(self.values, dtype=float)


def collect(actions: Iterator[Action], until: float) -> tuple[dict[str, Readings], list[Action]]:
    """Good readings per gauge and all actions up to simulated time `until`."""
    readings: dict[str, Readings] = {}
    taken: list[Action] = []
    for action in actions:
        if action.t >= until:
            break
        taken.append(action)
        if isinstance(action, Row) and action.value is not None:
            r = readings.setdefault(action.gauge, Readings())
            r.times.append(action.t)
            r.values.append(action.value)
    return readings, taken
