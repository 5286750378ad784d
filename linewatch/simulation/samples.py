"""The recorded sample feeds in `sample_feeds/`: invented logs from the extrusion line with
special causes placed at known rows, and the table of what `linewatch check` should find.

Regenerate (the files are committed; this is only needed after changing a sample):

    python -m linewatch.simulation.samples sample_feeds

Each sample is built from seeded normal noise plus causes added at fixed row numbers. While
building, every value's plotted-point index and file line are tracked, so the documented windows
(index and line ranges where a rule must fire) follow from the construction, not from the engine.
"""

from __future__ import annotations

import json
import sys
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone
from pathlib import Path

import numpy as np

from linewatch.simulation.line import EXTRUSION_LINE

START = datetime(2026, 3, 2, 6, 0, 0, tzinfo=timezone(timedelta(hours=1)))
# The invented line's gauges (their means and σ are defined once, in the scenario).
OD, WALL, FILL = (EXTRUSION_LINE.gauge(k) for k in ("od", "wall", "fill"))


@dataclass(frozen=True, slots=True)
class Expect:
    """A rule that must fire on `chart` of `characteristic` at a plotted index in [first, last]."""

    characteristic: str
    chart: str
    rule: str
    first: int
    last: int
    why: str


@dataclass(slots=True)
class Built:
    """One sample: its bytes, what must be found in it, and where the junk rows are."""

    file: str
    title: str
    layout: str
    story: str
    data: bytes
    expects: list[Expect]
    quiet: dict[str, int]  # characteristic -> no signal on any of its charts before this index
    rejected_lines: list[int]
    line_of: dict[str, list[int]] = field(default_factory=dict)  # per characteristic, per value
    subgroup: dict[str, int] = field(default_factory=dict)
    point_lines: dict[str, list[int]] = field(default_factory=dict)  # per plotted point

    def lines_for(self, e: Expect) -> tuple[int, int]:
        """File lines of the plotted points first..last (a subgroup's line is its last row's)."""
        if e.characteristic in self.point_lines:
            points = self.point_lines[e.characteristic]
            return points[e.first], points[min(e.last, len(points) - 1)]
        n = self.subgroup.get(e.characteristic, 1)
        lines = self.line_of[e.characteristic]
        return lines[(e.first + 1) * n - 1], lines[min((e.last + 1) * n, len(lines)) - 1]


class _Lines:
    """Collects a file's lines and, per characteristic, the line of each good value."""

    def __init__(self) -> None:
        self.out: list[bytes] = []
        self.line_of: dict[str, list[int]] = {}
        self.rejected: list[int] = []
        self.data_rows: list[tuple[int, bool]] = []  # (line, gave values) of each data row

    def add(self, text: str | bytes, values: tuple[str, ...] = (), junk: bool = False) -> None:
        self.out.append(text if isinstance(text, bytes) else text.encode("utf-8"))
        line = len(self.out)
        for name in values:
            self.line_of.setdefault(name, []).append(line)
        if junk:
            self.rejected.append(line)
        if values or junk:
            self.data_rows.append((line, bool(values)))

    def subgroup_lines(self, n: int) -> list[int]:
        """The line of each subgroup of `n` consecutive data rows (its last good row's): a
        junk row keeps its place, so its subgroup is one value short; the trailing incomplete
        subgroup is left out."""
        out = []
        for k in range(len(self.data_rows) // n):
            good = [line for line, kept in self.data_rows[k * n:(k + 1) * n] if kept]
            if good:
                out.append(good[-1])
        return out

    def data(self) -> bytes:
        return b"".join(x if x.endswith(b"\n") else x + b"\n" for x in self.out)


def _stamp(seconds: float) -> str:
    return (START + timedelta(seconds=seconds)).isoformat(timespec="seconds")


def _comma(x: float, decimals: int) -> str:
    return f"{x:.{decimals}f}".replace(".", ",")


def extrusion_wide(seed: int) -> Built:
    """Wide comma CSV: diameter (subgroups of 5), wall and melt temperature in one row."""
    rng = np.random.default_rng(seed)
    n = 300
    od = OD.mean + OD.sigma * rng.standard_normal(n)
    od[150:] += 2.0 * OD.sigma  # material lot change
    wall = WALL.mean + WALL.sigma * rng.standard_normal(n)
    wall[60:180] += np.linspace(0.0, 4.0, 120) * WALL.sigma  # die wear, then a die change
    melt = 215.0 + 0.8 * rng.standard_normal(n)
    melt[100:130] = 215.0 + 3.5 * 0.8 * rng.standard_normal(30)  # heater band cycling
    names = ("od_mm", "wall_mm", "melt_temp_c")
    out = _Lines()
    out.add("time,coil,od_mm,wall_mm,melt_temp_c")
    junk_after = {40: "12.004,n/a,214.9", 120: ",1.497,215.3", 250: "12.031,1.502"}
    for i in range(n):
        coil = f"C{3200 + i // 100:05d}"
        if i == 220:
            out.add("# winder restarted the gauge PC")
            out.add("time,coil,od_mm,wall_mm,melt_temp_c")
        out.add(f"{_stamp(2 * i)},{coil},{od[i]:.3f},{wall[i]:.3f},{melt[i]:.1f}", names)
        if i in junk_after:
            out.add(f"{_stamp(2 * i + 1)},{coil},{junk_after[i]}", junk=True)
    return Built(
        file="extrusion_wide.csv",
        title="Wide CSV: one row per tube section, three gauges",
        layout="wide, comma",
        story="Diameter readings form subgroups of 5 consecutive data rows (a junk row keeps "
        "its place, leaving its subgroup one value short). A new material lot "
        "arrives at data row 151 (diameter +2σ). The die wears from data row 61 to 180 (wall "
        "rises linearly by 4σ) and is changed after that. The melt-temperature heater band "
        "cycles between data rows 101 and 130 (σ × 3.5). Three junk rows and a restarted "
        "writer (a comment line plus the header repeated) sit in the file.",
        data=out.data(),
        expects=[
            Expect("outer-diameter", "xbar", "we1", 30, 32, "material lot change: +2σ"),
            Expect("outer-diameter", "xbar", "we4", 30, 37, "material lot change: +2σ"),
            Expect("wall-thickness", "individuals", "we4", 60, 179, "die wear: drift up 4σ"),
            Expect("wall-thickness", "individuals", "we2", 60, 179, "die wear: drift up 4σ"),
            Expect("melt-temperature", "individuals", "we1", 100, 129, "heater band cycling"),
            Expect("melt-temperature", "moving-range", "we1", 100, 130, "heater band cycling"),
        ],
        quiet={"outer-diameter": 30, "wall-thickness": 60, "melt-temperature": 100},
        rejected_lines=out.rejected,
        line_of=out.line_of,
        subgroup={"od_mm": 5},
        point_lines={"od_mm": out.subgroup_lines(5)},
    )


def wall_station(seed: int) -> Built:
    """Semicolon CSV with decimal comma from the older wall station (Nelson rules)."""
    rng = np.random.default_rng(seed)
    n = 320
    wall = WALL.mean + WALL.sigma * rng.standard_normal(n)
    wall[120:150] = WALL.mean + 0.0015 * rng.standard_normal(30)  # station averaging readings
    ramp = np.arange(8)
    wall[200:208] = (WALL.mean + WALL.sigma * (0.6 * ramp - 2.0)
                     + 0.0005 * rng.standard_normal(8))
    sign = np.where(np.arange(20) % 2 == 0, 1.0, -1.0)
    two_heads = 1.4 * sign + 0.1 * rng.standard_normal(20)  # out of step with each other
    wall[250:270] = WALL.mean + WALL.sigma * two_heads
    oval = 1.20 + 0.15 * rng.standard_normal(n)
    oval[160:] += 1.5 * 0.15  # puller belt pressure changed
    names = ("wall_mm", "ovality_pct")
    out = _Lines()
    out.add("time;coil;wall_mm;ovality_pct")
    junk_after = {
        40: "OVERRANGE;1,21",
        90: ";1,18",
        175: "1,503",
    }
    for i in range(n):
        coil = f"C{3300 + i // 80:05d}"
        out.add(f"{_stamp(5 * i)};{coil};{_comma(wall[i], 4)};{_comma(oval[i], 2)}", names)
        if i in junk_after:
            out.add(f"{_stamp(5 * i + 2)};{coil};{junk_after[i]}", junk=True)
        if i == 230:
            out.add(b"\xff\xfe\x81\x9c\xe2\x28\xa1 station buffer\n", junk=True)
    return Built(
        file="wall_station_semicolon.csv",
        title="Semicolon CSV with decimal comma: the older wall station",
        layout="wide, ';' delimiter, decimal comma",
        story="Wall thickness is charted as individuals with all eight Nelson rules. Data rows "
        "121–150: the station averages its readings (points hug the centre line). Rows "
        "201–208: a steady rise of 0.6σ per point (a centring screw turned step by step). "
        "Rows 251–270: readings alternate ±1.4σ (two measuring heads out of calibration "
        "against each other). Ovality steps up 1.5σ from row 161 (puller belt pressure). "
        "Four junk rows: a text value, an empty value, a missing field and binary noise.",
        data=out.data(),
        expects=[
            Expect("wall-thickness", "individuals", "n7", 120, 149, "readings averaged"),
            Expect("wall-thickness", "individuals", "n3", 203, 207, "steady rise"),
            Expect("wall-thickness", "individuals", "n8", 257, 269, "two heads alternate"),
            Expect("wall-thickness", "individuals", "n4", 262, 269, "two heads alternate"),
            Expect("ovality", "individuals", "we4", 160, 200, "belt pressure step +1.5σ"),
        ],
        quiet={"wall-thickness": 120, "ovality": 160},
        rejected_lines=out.rejected,
        line_of=out.line_of,
    )


def lab_long(seed: int) -> Built:
    """Long CSV: the quality lab's test results, one characteristic name and value per row."""
    rng = np.random.default_rng(seed)
    n = 120
    tensile = 24.0 + 0.6 * rng.standard_normal(n)
    tensile[45] = 24.0 + 7.0 * 0.6  # sample clamped crooked in the tester
    burst = 62.0 + 1.5 * rng.standard_normal(n)
    burst[80:] -= 3.5 * 1.5  # material lot with low molecular weight
    out = _Lines()
    out.add("time,sample,characteristic,value")
    for i in range(n):
        sample = f"L{7000 + i}"
        out.add(f"{_stamp(600 * i)},{sample},tensile_mpa,{tensile[i]:.2f}", ("tensile_mpa",))
        out.add(f"{_stamp(600 * i + 60)},{sample},burst_bar,{burst[i]:.1f}", ("burst_bar",))
        if i == 30:
            out.add(f"{_stamp(600 * i + 90)},{sample},burst_bar,leak at clamp", junk=True)
        if i == 70:
            out.add(f"{_stamp(600 * i + 90)},{sample},tensile_mpa,", junk=True)
    return Built(
        file="lab_long.csv",
        title="Long CSV: lab results, one characteristic per row",
        layout="long (characteristic, value)",
        story="Every ten minutes the lab tests one tube sample for tensile strength and burst "
        "pressure. Sample 46 of the tensile series was clamped crooked (+7σ). From sample 81 "
        "on, burst pressure drops 3.5σ (a material lot with a lower melt strength). Two junk "
        "rows: a note typed into the value field and an empty value.",
        data=out.data(),
        expects=[
            Expect("tensile-strength", "individuals", "we1", 45, 45, "sample clamped crooked"),
            Expect("tensile-strength", "moving-range", "we1", 45, 46, "sample clamped crooked"),
            Expect("burst-pressure", "individuals", "we1", 80, 84, "weak material lot: -3.5σ"),
            Expect("burst-pressure", "individuals", "we4", 80, 87, "weak material lot: -3.5σ"),
        ],
        quiet={"tensile-strength": 45, "burst-pressure": 80},
        rejected_lines=out.rejected,
        line_of=out.line_of,
    )


def fill_scale(seed: int) -> Built:
    """JSON lines from the packing scale: fill weight (Nelson) and sealing-jaw temperature."""
    rng = np.random.default_rng(seed)
    n = 360
    fill = FILL.mean + FILL.sigma * rng.standard_normal(n)
    fill[100:125] = 500.9  # display frozen
    fill[220:] -= 2.0 * FILL.sigma  # auger flights worn: under-fill
    seal = 165.0 + 0.5 * rng.standard_normal(n)
    seal[300:303] += 5.0 * 0.5  # heater controller overshoot
    out = _Lines()
    junk = {
        50: '{"time": "%s", "bag": "B%06d", "fill_g": "ERR", "seal_c": 165.1}',
        150: '{"time": "%s", "bag": "B%06d", "fill_g": null, "seal_c": 164.8}',
        250: '{"time": "%s", "bag": "B%06d", "fill_g": 49',
    }
    for i in range(n):
        record = {
            "time": _stamp(4 * i),
            "bag": f"B{i + 1:06d}",
            "head": "H1" if i % 2 == 0 else "H2",
            "fill_g": round(float(fill[i]), 1),
            "seal_c": round(float(seal[i]), 1),
        }
        out.add(json.dumps(record), ("fill_g", "seal_c"))
        if i in junk:
            out.add(junk[i] % (_stamp(4 * i + 2), i + 1), junk=True)
        if i == 330:
            out.add(b"\x9f\x00\xff\xfe\x12scale reboot\n", junk=True)
    return Built(
        file="fill_scale.jsonl",
        title="JSON lines: the packing scale",
        layout="JSON lines (wide objects)",
        story="One object per bag. Fill weight uses the Nelson rules. Bags 101–125: the "
        "scale's display froze at 500.9 g (a stuck gauge looks like a perfectly steady "
        "process). From bag 221 the auger's flights are worn and bags are 2σ light. The "
        "sealing-jaw temperature overshoots +5σ for bags 301–303. Four junk rows: a text "
        "value, a null, an object cut off mid-write and binary noise.",
        data=out.data(),
        expects=[
            Expect("fill-weight", "individuals", "n2", 100, 108, "display frozen at 500.9 g"),
            Expect("fill-weight", "individuals", "n7", 100, 114, "display frozen at 500.9 g"),
            Expect("fill-weight", "individuals", "n5", 220, 240, "worn auger: -2σ"),
            Expect("fill-weight", "individuals", "n2", 221, 240, "worn auger: -2σ"),
            Expect("seal-temperature", "individuals", "we1", 300, 302, "heater overshoot"),
        ],
        quiet={"fill-weight": 100, "seal-temperature": 300},
        rejected_lines=out.rejected,
        line_of=out.line_of,
    )


def end_of_line_tester(seed: int) -> Built:
    """Pass/fail per tube from the end-of-line leak tester, charted per hour of the clock."""
    rng = np.random.default_rng(seed)
    out = _Lines()
    out.add("time,tube,result")
    hours = 20
    point_lines: list[int] = []
    spellings = ("PASS", "PASS", "PASS", "pass", "OK")
    junk = {(3, 40): "RETEST", (8, 5): "", (15, 70): "PASS?"}
    tube = 0
    for hour in range(hours):
        fail_rate = 0.07 if 13 <= hour <= 16 else 0.02  # worn seal on the test fixture
        at = hour * 3600.0 + float(rng.uniform(5, 25))
        k = 0
        while at < (hour + 1) * 3600.0 - 1:
            tube += 1
            result = ("FAIL", "NG", "fail")[tube % 3] if rng.random() < fail_rate else \
                spellings[tube % len(spellings)]
            out.add(f"{_stamp(at)},T{tube:06d},{result}", ("result",))
            if (hour, k) in junk:
                out.add(f"{_stamp(at + 1)},T{tube:06d}R,{junk[(hour, k)]}", junk=True)
            k += 1
            at += float(rng.uniform(20, 40))
        point_lines.append(out.line_of["result"][-1])
    return Built(
        file="end_of_line_tester.csv",
        title="Pass/fail CSV: the end-of-line leak tester",
        layout="wide, comma, one row per tube",
        story="Each tube is leak-tested once and logged PASS or FAIL (some rows say pass, OK, "
        "NG or fail: results are read without regard to case). Subgroups are the tubes of "
        "each hour of the clock (about 120, varying), charted as a p chart with limits from "
        "the first 10 hours. About 2% fail; from the 14th hour to the 17th the fixture's "
        "seal is worn and 7% fail. Three junk rows: results that are neither pass nor fail "
        "(RETEST, empty, PASS?).",
        data=out.data(),
        expects=[Expect("leak-test", "p", "we1", 13, 16, "worn fixture seal: 7% fail")],
        quiet={"leak-test": 13},
        rejected_lines=out.rejected,
        line_of=out.line_of,
        point_lines={"result": point_lines},
    )


def vision_station(seed: int) -> Built:
    """Surface defects found by the vision station in each 5-minute block of frames."""
    rng = np.random.default_rng(seed)
    out = _Lines()
    out.add("time,coil,frames,defects")
    n = 160
    frames = rng.integers(180, 261, n)
    rate = np.full(n, 0.02)
    rate[100:115] = 0.06  # die-lip build-up scores the surface
    defects = rng.poisson(rate * frames)
    defects[140:148] = 0  # the camera's lamp failed: it sees nothing
    junk = {30: ("220", "n/a"), 75: ("0", "3"), 125: ("210", "-1")}
    for i in range(n):
        coil = f"C{4100 + i // 40:05d}"
        out.add(f"{_stamp(300 * i)},{coil},{frames[i]},{defects[i]}", ("defects",))
        if i in junk:
            f, d = junk[i]
            out.add(f"{_stamp(300 * i + 150)},{coil},{f},{d}", junk=True)
    return Built(
        file="vision_station.csv",
        title="Defect counts CSV: the surface vision station",
        layout="wide, comma, one row per 5-minute block",
        story="Each row counts the surface defects the camera found in the frames it "
        "inspected in five minutes (180 to 260 frames: the line speed varies), charted as a "
        "u chart (defects per frame) with limits from the first 60 rows. About 0.02 defects "
        "per frame; rows 101–115: build-up on the die lip scores the surface (0.06 per frame); "
        "rows 141–148: the lamp failed and the camera reports no defect at all. Three junk "
        "rows: a text count, 0 frames and a negative count.",
        data=out.data(),
        expects=[
            Expect("surface-defects", "u", "we1", 100, 114, "die-lip build-up: 3 × the rate"),
            Expect("surface-defects", "u", "we4", 140, 152, "lamp failed: no defect seen"),
        ],
        quiet={"surface-defects": 100},
        rejected_lines=out.rejected,
        line_of=out.line_of,
    )


SHIFT_AT = 400  # data row (0-based) from which the cooled die zone thickens the wall


def wall_cooling(seed: int) -> Built:
    """A sustained 1σ shift: the same wall readings charted three ways (CUSUM, EWMA, the
    Western Electric rules), with the gauge's known centre and σ."""
    rng = np.random.default_rng(seed)
    n = 600
    wall = WALL.mean + WALL.sigma * rng.standard_normal(n)
    wall[SHIFT_AT:] += 1.0 * WALL.sigma  # die heater zone 3 cools: the wall thickens, stays
    out = _Lines()
    out.add("time,coil,wall_mm")
    names = ("wall_mm",)
    for i in range(n):
        out.add(f"{_stamp(2 * i)},C{3300 + i // 100:05d},{wall[i]:.4f}", names)
    return Built(
        file="wall_cooling.csv",
        title="A small sustained shift: one wall gauge charted three ways",
        layout="wide, comma",
        story=f"The wall gauge's readings (known centre {WALL.mean:g} mm, σ {WALL.sigma:g} "
        f"mm) are charted three times over: with the CUSUM (`wall-cusum`), the EWMA "
        f"(`wall-ewma`) and the Western Electric rules (`wall-we`). At data row "
        f"{SHIFT_AT + 1} die heater zone 3 cools and the wall thickens by 1σ to the end of "
        f"the file. The detection-power table predicts about 10 points to find the shift for "
        f"CUSUM and EWMA, about 9 for the Western Electric rules, but a false alarm every "
        f"92 points before it for those (every 465–500 for CUSUM and EWMA). The seed was "
        f"picked so that this one run shows that typical outcome; "
        f"`tests/integration/cli/test_small_shift_sample.py` holds it to the table.",
        data=out.data(),
        expects=[
            Expect("wall-cusum", "cusum", "cusum", SHIFT_AT, SHIFT_AT + 30,
                   "zone 3 cools: wall +1σ"),
            Expect("wall-ewma", "ewma", "ewma", SHIFT_AT, SHIFT_AT + 30,
                   "zone 3 cools: wall +1σ"),
            Expect("wall-we", "individuals", "we2", SHIFT_AT, n - 1, "zone 3 cools: wall +1σ"),
        ],
        quiet={"wall-cusum": SHIFT_AT, "wall-ewma": SHIFT_AT},
        rejected_lines=out.rejected,
        line_of={k: out.line_of["wall_mm"] for k in ("wall-cusum", "wall-ewma", "wall-we")},
    )


# Which builder, with which seed, makes which file; the config for each is config/<stem>.toml.
SPEEDS = (20.0, 22.0, 18.0, 21.0, 19.0)  # line speed set points tried, m/min, 3 rows each


def lot_change(seed: int) -> Built:
    """Wide CSV of a lot change and a line-speed trial: the diameter follows the speed set
    point (faster haul-off draws the tube thinner) and steps up with the new resin lot; the
    new lot also spreads the wall more."""
    rng = np.random.default_rng(seed)
    n = 240
    speed = np.array([SPEEDS[(i // 3) % len(SPEEDS)] for i in range(n)])
    od = 11.990 - 0.003 * (speed - 20.0) + 0.010 * rng.standard_normal(n)
    od[120:] += 0.020  # resin lot R-2612: +2σ
    wall = WALL.mean + WALL.sigma * rng.standard_normal(n)
    wall[120:] = WALL.mean + 0.001 + 1.6 * WALL.sigma * rng.standard_normal(n - 120)
    names = ("od_mm", "wall_mm")
    out = _Lines()
    out.add("time,lot,speed_setpoint,od_mm,wall_mm")
    junk_after = {70: "R-2611,20.0,12.00x,1.501", 180: "R-2612,,,"}
    for i in range(n):
        lot = "R-2611" if i < 120 else "R-2612"
        out.add(f"{_stamp(6 * i)},{lot},{speed[i]:.1f},{od[i]:.3f},{wall[i]:.3f}", names)
        if i in junk_after:
            out.add(f"{_stamp(6 * i + 3)},{junk_after[i]}", junk=True)
    return Built(
        file="lot_change_speed.csv",
        title="Wide CSV: a resin lot change during a line-speed trial",
        layout="wide, comma",
        story="The diameter (individuals) follows the line-speed set point, which the "
        "operators step through 18–22 m/min three rows at a time (−0.003 mm per m/min). Resin "
        "lot R-2611 runs 120 rows, then lot R-2612 raises the diameter by 0.020 mm (2σ) and "
        "spreads the wall 1.6 times as wide with its mean nearly unchanged. Two junk rows. "
        "For the investigation: `linewatch check sample_feeds/lot_change_speed.csv -c "
        "config/lot_change_speed.toml --phase-by lot --versus speed_setpoint --format html "
        "-o analysis.html`.",
        data=out.data(),
        expects=[
            Expect("outer-diameter", "individuals", "we2", 120, 239, "resin lot R-2612: +2σ"),
            Expect("wall-thickness", "individuals", "we1", 120, 239,
                   "resin lot R-2612: wall spread ×1.6"),
        ],
        quiet={"outer-diameter": 120, "wall-thickness": 120},
        rejected_lines=out.rejected,
        line_of=out.line_of,
    )


SAMPLES: dict[str, tuple[Callable[[int], Built], int]] = {
    "extrusion_wide": (extrusion_wide, 4),
    "wall_station_semicolon": (wall_station, 43),
    "lab_long": (lab_long, 14),
    "fill_scale": (fill_scale, 90),
    "end_of_line_tester": (end_of_line_tester, 1),
    "vision_station": (vision_station, 3),
    "wall_cooling": (wall_cooling, 39),
    "lot_change_speed": (lot_change, 26),
}

CHARACTERISTIC_COLUMNS = {
    "outer-diameter": "od_mm",
    "wall-thickness": "wall_mm",
    "melt-temperature": "melt_temp_c",
    "ovality": "ovality_pct",
    "tensile-strength": "tensile_mpa",
    "burst-pressure": "burst_bar",
    "fill-weight": "fill_g",
    "seal-temperature": "seal_c",
    "leak-test": "result",
    "surface-defects": "defects",
}


def build(stem: str, seed: int | None = None) -> Built:
    """Build one sample (with its recorded seed unless another is given)."""
    builder, recorded = SAMPLES[stem]
    built = builder(recorded if seed is None else seed)
    # Index windows are per characteristic name; line lookups go by column.
    built.line_of = {
        name: built.line_of[col] for name, col in CHARACTERISTIC_COLUMNS.items()
        if col in built.line_of
    } or built.line_of  # a sample that names its characteristics itself
    built.subgroup = {
        name: built.subgroup[col] for name, col in CHARACTERISTIC_COLUMNS.items()
        if col in built.subgroup
    }
    built.point_lines = {
        name: built.point_lines[col] for name, col in CHARACTERISTIC_COLUMNS.items()
        if col in built.point_lines
    }
    return built


def readme_section(stem: str, built: Built) -> str:
    """The Markdown section documenting one sample (parsed back by the sample tests)."""
    rows = [
        f"## {built.file}",
        "",
        f"**{built.title}.** Layout: {built.layout}. Config: `config/{stem}.toml`.",
        "",
        built.story,
        "",
        "```",
        f"linewatch check sample_feeds/{built.file} -c config/{stem}.toml --format jsonl",
        "```",
        "",
        "| characteristic | chart | rule | points (0-based index) | file lines | cause |",
        "|---|---|---|---|---|---|",
    ]
    for e in built.expects:
        lo, hi = built.lines_for(e)
        rows.append(
            f"| {e.characteristic} | {e.chart} | {e.rule} | {e.first}–{e.last} | {lo}–{hi} "
            f"| {e.why} |"
        )
    rows.append("")
    quiet = ", ".join(f"{name} before point {idx}" for name, idx in built.quiet.items())
    rows.append(f"Quiet (no signal on any chart): {quiet}.")
    rows.append("")
    if built.rejected_lines:
        rows.append(f"Rejected lines: {', '.join(str(x) for x in built.rejected_lines)}.")
        rows.append("")
    return "\n".join(rows)


README_HEAD = """# Sample feeds

Recorded logs from an invented tube-extrusion line (demo data, not from any real plant), each
with special causes placed at known rows. `tests/unit/simulation/test_samples.py` runs
`linewatch check` on every sample with its config and asserts that each rule in the tables
below fires on the named characteristic and chart inside the stated window of plotted points
(and file lines), that the stretch before the first cause is quiet, and that exactly the listed
junk lines are rejected.

A rule is listed with a window, not a single point, when the exact first point depends on the
noise around the change (a run that started before the change counts too). The windows follow
from how each file was built (`linewatch/simulation/samples.py`, fixed seeds); regenerate with
`python -m linewatch.simulation.samples sample_feeds`.

Indices count plotted points from 0 (for the diameter, one point per subgroup of 5 rows; for
the leak tester, one per hour of the clock; for the vision station, one per row; a moving
range takes the index of the later of its two points); lines count file lines from 1, header
included (a subgroup's line is its last row's). Limits come from each config's `baseline`
(the quiet first part).

"""


def write_samples(folder: Path) -> None:
    """Write every sample file and the README that documents them into `folder`."""
    folder.mkdir(parents=True, exist_ok=True)
    sections = [README_HEAD]
    for stem in SAMPLES:
        built = build(stem)
        (folder / built.file).write_bytes(built.data)
        sections.append(readme_section(stem, built))
    (folder / "README.md").write_text("\n".join(sections), encoding="utf-8")


if __name__ == "__main__":
    write_samples(Path(sys.argv[1] if len(sys.argv) > 1 else "sample_feeds"))
