"""A fixed, deterministic picture of an invented tube-extrusion line for screen tests and demos.

Nothing here is statistics to trust: the points come from a seeded generator and the limits from
the generator's own parameters. It exists so the screens can be tested and looked at without the
monitor.
"""

from __future__ import annotations

import math
import random
import threading
from collections.abc import Callable
from dataclasses import dataclass, field

from linewatch.domain.errors import LinewatchError
from linewatch.present import view
from linewatch.present.close_up import with_figures
from linewatch.present.mark_points import mark_chart

NOW = 1_764_600_000.0  # the fixed clock of every test picture


def fixed_clock() -> float:
    """The clock the tests inject so ages and times never move."""
    return NOW


def _normals(seed: int, n: int) -> list[float]:
    """Box-Muller from random.random(), which Python keeps reproducible across versions."""
    rng = random.Random(seed)
    out = []
    while len(out) < n:
        u1, u2 = rng.random() or 1e-12, rng.random()
        r = math.sqrt(-2.0 * math.log(u1))
        out += [r * math.cos(2 * math.pi * u2), r * math.sin(2 * math.pi * u2)]
    return out[:n]


def _rules_beyond(values: list[float], ucl: float, lcl: float, rule: str) -> list[str]:
    return [rule if (v > ucl or v < lcl) else "" for v in values]


def _individuals(name: str, seed: int, n: int, mu: float, s: float,
                 shift_at: int | None = None, shift: float = 0.0,
                 drift: float = 0.0, drift_from: int = 0,
                 ) -> tuple[view.ChartView, view.ChartView, list[float]]:
    z = _normals(seed, n)
    xs = []
    for i in range(n):
        v = mu + s * z[i] + drift * max(0, i - drift_from)
        if shift_at is not None and i >= shift_at:
            v += shift
        xs.append(round(v, 4))
    loc = view.ChartView(
        chart="individuals", values=xs, indices=list(range(n)),
        rules=_rules_beyond(xs, mu + 3 * s, mu - 3 * s, "we1"),
        center=mu, ucl=mu + 3 * s, lcl=mu - 3 * s, sigma=s, phase_starts=[0],
    )
    mr = [round(abs(xs[i] - xs[i - 1]), 4) for i in range(1, n)]
    # d2(2) = 1.128, d3(2) = 0.853 (published constants, from memory; fake limits only)
    disp = view.ChartView(
        chart="moving-range", values=mr, indices=list(range(1, n)),
        rules=_rules_beyond(mr, 3.686 * s, -1.0, "we1"),
        center=1.128 * s, ucl=3.686 * s, lcl=0.0, sigma=0.853 * s, phase_starts=[1],
    )
    return loc, disp, xs


def _stats(phase: int, start: int, xs: list[float], lsl: float | None,
           usl: float | None) -> view.PhaseStats:
    n = len(xs)
    mean = sum(xs) / n
    sd = math.sqrt(sum((x - mean) ** 2 for x in xs) / (n - 1))
    half = 2.0 * sd / math.sqrt(n)
    cp = (usl - lsl) / (6 * sd) if lsl is not None and usl is not None else None
    sides = [v for v in ((usl - mean) / (3 * sd) if usl is not None else None,
                         (mean - lsl) / (3 * sd) if lsl is not None else None) if v is not None]
    cpk = min(sides) if sides else None
    ci = (cpk - 0.25, cpk + 0.25) if cpk is not None else None
    # the fake's Pp/Ppk: the same figures less 0.05 (invented; the real ones come from
    # engine.summary.capability with the overall SD)
    return view.PhaseStats(phase, start, n, mean, sd, (mean - half, mean + half), cp, cpk, ci,
                           12.5 if cpk is not None else None,
                           None if cp is None else cp - 0.05, None if cpk is None else cpk - 0.05)


def _characteristic(name: str, unit: str, state: str, loc: view.ChartView,
                    disp: view.ChartView, xs: list[float], lsl: float | None,
                    usl: float | None, age: float, **extra: object) -> view.CharacteristicView:
    recent = xs[-30:]
    mean = sum(recent) / len(recent)
    sigma = loc.sigma if loc.chart == "individuals" else (loc.sigma or 0) * math.sqrt(5)
    sides = [v for v in ((usl - mean) / sigma if usl is not None else None,
                         (mean - lsl) / sigma if lsl is not None else None) if v is not None]
    margin = min(sides) if sides and sigma else None
    cpk = margin / 3 if margin is not None else None
    phases = []
    starts = loc.phase_starts or [0]
    for p, start in enumerate(starts):
        end = starts[p + 1] if p + 1 < len(starts) else len(xs)
        phases.append(_stats(p + 1, start, xs[start:end], lsl, usl))
    cv = view.CharacteristicView(
        name=name, unit=unit, state=state, last_value=xs[-1], last_row_age=age, lsl=lsl,
        usl=usl, points=len(xs), location=loc, dispersion=disp, recent_mean=mean,
        recent_sigma=sigma, margin_sigma=margin, cpk=cpk,
        cpk_lower95=None if cpk is None else cpk - 0.21, phases=phases,
    )
    for key, value in extra.items():
        setattr(cv, key, value)
    return cv


def build_snapshot() -> view.LineSnapshot:
    """The whole invented line: six characteristics, six alarms, three feeds."""
    chars: list[view.CharacteristicView] = []

    # Outer diameter from the laser gauge, subgroups of 5, a material lot change shifts it.
    z = _normals(11, 5 * 48)
    mu, s = 25.00, 0.04
    xbar, rng_ = [], []
    for g in range(48):
        sub = [mu + s * z[5 * g + k] + (0.05 if g >= 40 else 0.0) for k in range(5)]
        xbar.append(round(sum(sub) / 5, 4))
        rng_.append(round(max(sub) - min(sub), 4))
    sx = s / math.sqrt(5)
    rules = _rules_beyond(xbar, mu + 3 * sx, mu - 3 * sx, "we1")
    rules[41] = rules[41] or "we2"
    loc = view.ChartView("xbar", xbar, list(range(48)), rules, mu, mu + 3 * sx, mu - 3 * sx, sx,
                         [0])
    # d2(5) = 2.326, d3(5) = 0.864 (published constants, from memory; fake limits only)
    disp = view.ChartView("range", rng_, list(range(48)), _rules_beyond(rng_, 4.918 * s, -1, "we1"),
                          2.326 * s, 4.918 * s, 0.0, 0.864 * s, [0])
    chars.append(_characteristic("outer-diameter", "mm", view.STATE_ALARM, loc, disp, xbar,
                                 24.85, 25.15, 2.0, subgroup_size=5, open_alarms=3))

    # Wall thickness: a new die at point 40 moved the centre up, so the
    # second phase has limits of its own; then die wear makes it drift up from point 62.
    loc, disp, xs = _individuals("wall-thickness", 23, 90, 2.10, 0.03, shift_at=40, shift=0.05,
                                 drift=0.002, drift_from=62)
    old, new = (2.10, 0.03), (2.15, 0.03)
    loc.phase_starts = [0, 40]
    loc.phase_limits = [(0, old[0], old[0] + 3 * old[1], old[0] - 3 * old[1], old[1]),
                        (40, new[0], new[0] + 3 * new[1], new[0] - 3 * new[1], new[1])]
    loc.center, loc.ucl, loc.lcl, loc.sigma = loc.phase_limits[-1][1:]
    loc.rules = (_rules_beyond(xs[:40], old[0] + 3 * old[1], old[0] - 3 * old[1], "we1")
                 + _rules_beyond(xs[40:], new[0] + 3 * new[1], new[0] - 3 * new[1], "we1"))
    loc.rules[84:90] = [r or "we4" for r in loc.rules[84:90]]
    disp.phase_starts = [1, 40]
    # moving-range limits from d2(2) = 1.128 and D4(2) = 3.267 (published, from memory)
    disp.phase_limits = [(1, 1.128 * old[1], 3.686 * old[1], 0.0, 0.853 * old[1]),
                         (40, 1.128 * new[1], 3.686 * new[1], 0.0, 0.853 * new[1])]
    disp.center, disp.ucl, disp.lcl, disp.sigma = disp.phase_limits[-1][1:]
    chars.append(_characteristic("wall-thickness", "mm", view.STATE_WATCH, loc, disp, xs,
                                 1.90, 2.30, 1.0, open_alarms=1, seconds_per_point=6.0))

    loc, disp, xs = _individuals("ovality", 31, 70, 0.60, 0.12)
    chars.append(_characteristic("ovality", "%", view.STATE_OK, loc, disp, xs, None, 1.50, 3.0))

    loc, disp, xs = _individuals("fill-weight", 47, 60, 503.0, 2.6)
    chars.append(_characteristic("fill-weight", "g", view.STATE_STALE, loc, disp, xs, 495.0,
                                 515.0, 1260.0, stale=True, open_alarms=2, rejected=4))

    loc, disp, xs = _individuals("melt-temperature", 53, 8, 212.0, 1.1)
    learning = view.CharacteristicView(
        name="melt-temperature", unit="°C", state=view.STATE_LEARNING, last_value=xs[-1],
        last_row_age=4.0, points=8, baseline_needed=12,
        location=view.ChartView("individuals", xs, list(range(8)), [""] * 8),
    )
    chars.append(learning)

    loc, disp, xs = _individuals("line-speed", 67, 80, 18.5, 0.08)
    chars.append(_characteristic("line-speed", "m/min", view.STATE_OK, loc, disp, xs, 18.0,
                                 19.0, 1.0))

    plan_od = ("Check the die centring and the vacuum tank level; measure five tubes by hand; "
               "if the hand measures agree, stop the puller and call the shift engineer.")
    reasons = ["tool wear", "material lot change", "gauge or measurement error",
               "adjustment made", "no cause found"]

    def alarm(id_: int, kind: str, ch: str, chart: str, rule: str, desc: str, state: str,
              prio: int, ago: float, **kw: object) -> view.AlarmView:
        return view.AlarmView(id=id_, kind=kind, characteristic=ch, chart=chart, rule=rule,
                              description=desc, state=state, priority=prio, raised_at=NOW - ago,
                              reasons=reasons, **kw)  # type: ignore[arg-type]

    # one alarm per chart and condition, each with what it gathered (the alarm model)
    alarms = [
        alarm(2, "beyond-limits", "outer-diameter", "range", "we1",
              "a point outside the control limits", view.RETURNED_UNACKNOWLEDGED, 2, 3600,
              first_index=12, last_index=12, reaction_plan=plan_od, signals=1,
              counts="we1 ×1", active=False),
        alarm(3, "out-of-spec", "fill-weight", "individuals", "usl",
              "a measurement above the USL", view.SHELVED, 1, 2400, shelved_until=NOW + 1200,
              reason="scale being recalibrated", reaction_plan="Re-weigh the last carton.",
              signals=3, episodes=2, counts="usl ×3", above_usl=3, below_lsl=0),
        alarm(4, "feed-health", "/srv/line3/scale.jsonl", "", "stale", "no new row for 20 minutes",
              view.UNACKNOWLEDGED, 4, 60, reaction_plan="Check the packing scale's cable.",
              signals=1, counts="stale ×1"),
        alarm(5, "run-rule", "wall-thickness", "individuals", "we4",
              "8 points in a row on one side of the centre line", view.ACKNOWLEDGED, 3, 300,
              first_index=84, last_index=89, acknowledged_by="kmeyer",
              acknowledged_at=NOW - 200, reason="tool wear", note="die heater 3 replaced",
              reaction_plan="Log the die temperature zones; adjust the puller speed.",
              signals=6, counts="we4 ×6 we3 ×2"),
        alarm(6, "run-rule", "line-speed", "individuals", "we2",
              "2 of 3 points more than 2σ from the centre, same side", view.UNACKNOWLEDGED, 3,
              95, first_index=41, last_index=41, signals=1, counts="we2 ×1"),
        alarm(7, "beyond-limits", "outer-diameter", "xbar", "we2",
              "2 of 3 points more than 2σ from the centre, same side", view.UNACKNOWLEDGED, 2,
              40, first_index=41, last_index=47, reaction_plan=plan_od, signals=5, episodes=2,
              counts="we2 ×3 we1 ×2"),
    ]
    feeds = [
        view.FeedView("/srv/line3/laser-od.csv", rows=12480, rows_per_second=5.0,
                      last_row_age=2.0, rotations=1),
        view.FeedView("/srv/line3/wall-ultrasonic.csv", rows=3210, rows_per_second=1.0,
                      last_row_age=1.0),
        view.FeedView("/srv/line3/scale.jsonl", rows=880, rejected=4, rows_per_second=0.0,
                      last_row_age=1260.0, stale=True, status="stale", truncations=1,
                      last_rejects=["line 871: weight is not a number: 'ERR'",
                                    "line 874: missing value of 'weight'"]),
    ]
    for cv in chars:  # each point's pattern mark, as the store's picture carries them
        for chart in (cv.location, cv.dispersion):
            if chart is not None:
                mark_chart(chart)
    return view.LineSnapshot(version=1, title="extrusion line 3", characteristics=chars,
                             alarms=alarms, feeds=feeds)


@dataclass
class FakeSource:
    """A SnapshotSource over the fixed picture; `publish` swaps it and tells subscribers."""

    picture: view.LineSnapshot = field(default_factory=build_snapshot)
    callbacks: list[Callable[[int], None]] = field(default_factory=list)
    snapshot_calls: int = 0
    detail_calls: int = 0
    lock: threading.Lock = field(default_factory=threading.Lock)

    def snapshot(self) -> view.LineSnapshot:
        with self.lock:
            self.snapshot_calls += 1
            return self.picture

    def detail(self, characteristic: str) -> view.CharacteristicView | None:
        with self.lock:
            self.detail_calls += 1
            for cv in self.picture.characteristics:
                if cv.name == characteristic:  # with the close-up's figures, as the store's
                    return with_figures(cv)
        return None

    def subscribe(self, callback: Callable[[int], None]) -> None:
        self.callbacks.append(callback)

    def publish(self, picture: view.LineSnapshot) -> None:
        """Replace the picture (from any thread) and notify like the monitor does."""
        with self.lock:
            self.picture = picture
        for cb in list(self.callbacks):
            cb(picture.version)


@dataclass
class FakeActions:
    """Records every call; `fail_with` makes the next call raise like the monitor would."""

    calls: list[tuple[str, tuple[object, ...]]] = field(default_factory=list)
    fail_with: str | None = None

    def _record(self, name: str, *args: object) -> None:
        if self.fail_with:
            message, self.fail_with = self.fail_with, None
            raise LinewatchError(message)
        self.calls.append((name, args))

    def acknowledge(self, alarm_ids: list[int], reason: str, note: str = "") -> None:
        self._record("acknowledge", list(alarm_ids), reason, note)

    def acknowledge_characteristic(self, characteristic: str, reason: str, note: str = "") -> int:
        self._record("acknowledge_characteristic", characteristic, reason, note)
        return 2

    def shelve(self, alarm_id: int, seconds: float, reason: str) -> None:
        self._record("shelve", alarm_id, seconds, reason)

    def unshelve(self, alarm_id: int) -> None:
        self._record("unshelve", alarm_id)

    def new_baseline(self, characteristic: str, start_index: int, reason: str) -> None:
        self._record("new_baseline", characteristic, start_index, reason)
