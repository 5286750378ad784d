"""The line simulator: deterministic rows, every scheduled special cause present, real files.

The simulator's data are invented (demo only); these tests check that what it writes matches
its own schedule, measured with numpy/scipy rather than with linewatch's engine.
"""

from __future__ import annotations

import fnmatch
import json
import os
import signal
import subprocess
import sys
import threading
import time
from datetime import datetime, timedelta, timezone
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from linewatch.simulation.line import (
    DRIFT,
    EXTRUSION_LINE,
    HUG,
    ROTATE,
    SHIFT,
    SILENT,
    SPREAD,
    STUCK,
    Cause,
    Header,
    Note,
    Rotate,
    Row,
    collect,
    generate,
)
from linewatch.simulation.writer import PARTIAL_PAUSE, write_feeds

START = datetime(2026, 3, 2, 6, 0, 0, tzinfo=timezone(timedelta(hours=1)))
RATE = 5.0
ONE_CYCLE = EXTRUSION_LINE.cycle


def _cause(gauge: str, kind: str) -> Cause:
    return next(c for c in EXTRUSION_LINE.causes if c.gauge == gauge and c.kind == kind)


@pytest.fixture(scope="module")
def first_cycle() -> tuple[dict, list]:
    """Seed 7, one full cycle of the schedule plus history."""
    return collect(generate(7, RATE, START), ONE_CYCLE)


def _window(readings, start: float, end: float) -> np.ndarray:
    t = np.asarray(readings.times)
    return readings.array()[(t >= start) & (t < end)]


def _history(readings) -> np.ndarray:
    t = np.asarray(readings.times)
    return readings.array()[t < 0]


def test_same_seed_gives_the_same_rows() -> None:
    a = collect(generate(11, RATE, START), 120.0)[1]
    b = collect(generate(11, RATE, START), 120.0)[1]
    assert len(a) > 500
    assert a == b


def test_different_seeds_give_different_values() -> None:
    a = collect(generate(1, RATE, START), 60.0)[0]["od"].values
    b = collect(generate(2, RATE, START), 60.0)[0]["od"].values
    assert len(a) == len(b)
    assert sum(x != y for x, y in zip(a, b, strict=True)) > len(a) // 2


def test_history_comes_first_and_is_in_control(first_cycle) -> None:
    readings, _ = first_cycle
    for gauge in EXTRUSION_LINE.gauges:
        hist = _history(readings[gauge.key])
        assert len(hist) == EXTRUSION_LINE.history_points * gauge.subgroup
        # Mean within 4 standard errors of the nominal; sample SD inside the 99.9 % chi-square
        # interval for normal data with the gauge's σ (scipy.stats.chi2).
        n = len(hist)
        se = gauge.sigma / np.sqrt(n)
        assert abs(hist.mean() - gauge.mean) < 4 * se
        lo, hi = np.sqrt(stats.chi2.ppf([0.0005, 0.9995], n - 1) / (n - 1))
        assert lo < hist.std(ddof=1) / gauge.sigma < hi


def test_material_lot_change_shifts_the_diameter(first_cycle) -> None:
    readings, _ = first_cycle
    c = _cause("od", SHIFT)
    g = EXTRUSION_LINE.gauge("od")
    inside = _window(readings["od"], c.start, c.end)
    before = _window(readings["od"], 0, c.start)
    # Within 4 standard errors of the planned step (standard error of a mean: σ/√n).
    shift = (inside.mean() - g.mean) / g.sigma
    assert abs(shift - c.size) < 4 / np.sqrt(len(inside))
    assert abs(before.mean() - g.mean) / g.sigma < 4 / np.sqrt(len(before))


def test_die_wear_drifts_the_wall_by_the_planned_amount(first_cycle) -> None:
    readings, _ = first_cycle
    c = _cause("wall", DRIFT)
    g = EXTRUSION_LINE.gauge("wall")
    t = np.asarray(readings["wall"].times)
    mask = (t >= c.start) & (t < c.end)
    (slope, _intercept), cov = np.polyfit(t[mask], readings["wall"].array()[mask], 1, cov=True)
    planned = c.size * g.sigma / (c.end - c.start)
    assert abs(slope - planned) < 4 * np.sqrt(cov[0, 0])  # 4 standard errors of the slope
    assert slope > 4 * np.sqrt(cov[0, 0])  # and clearly not flat


def test_burst_of_variation_widens_the_fill_weight(first_cycle) -> None:
    readings, _ = first_cycle
    c = _cause("fill", SPREAD)
    g = EXTRUSION_LINE.gauge("fill")
    inside = _window(readings["fill"], c.start, c.end)
    n = len(inside)
    lo, hi = np.sqrt(stats.chi2.ppf([0.0005, 0.9995], n - 1) / (n - 1))  # 99.9 % interval
    assert lo < inside.std(ddof=1) / (c.size * g.sigma) < hi


def test_centre_hugging_narrows_the_wall(first_cycle) -> None:
    readings, _ = first_cycle
    c = _cause("wall", HUG)
    g = EXTRUSION_LINE.gauge("wall")
    inside = _window(readings["wall"], c.start, c.end)
    assert len(inside) >= 15  # enough for a 15-in-a-row test
    assert inside.std(ddof=1) / g.sigma < 0.4
    assert np.all(np.abs(inside - g.mean) <= g.sigma)


def test_stuck_scale_repeats_one_value(first_cycle) -> None:
    readings, _ = first_cycle
    c = _cause("fill", STUCK)
    inside = _window(readings["fill"], c.start, c.end)
    assert len(inside) >= 10  # the demo config's stuck_repeats
    assert len(np.unique(inside)) == 1
    after = _window(readings["fill"], c.end, c.end + 20)
    assert len(np.unique(after)) > 1


def test_silent_gauge_leaves_a_gap_then_writes_its_header_again(first_cycle) -> None:
    readings, actions = first_cycle
    c = _cause("od", SILENT)
    t = np.asarray(readings["od"].times)
    assert not np.any((t >= c.start) & (t < c.end))
    gaps = np.diff(t)
    assert gaps.max() >= (c.end - c.start) - 0.5
    headers = [a for a in actions if isinstance(a, Header) and a.file == "od_gauge.csv"]
    assert any(h.t == pytest.approx(c.end, abs=0.5) for h in headers)


def test_junk_rows_cannot_be_read_as_numbers(first_cycle) -> None:
    _, actions = first_cycle
    junk = [a for a in actions if isinstance(a, Row) and a.value is None]
    files = {a.file for a in junk}
    assert files == {g.file for g in EXTRUSION_LINE.gauges}
    kinds = set()
    for row in junk:
        assert row.data.endswith(b"\n") and row.data.count(b"\n") == 1
        try:
            text = row.data.decode("utf-8")
        except UnicodeDecodeError:
            kinds.add("binary")
            continue
        if row.file.endswith(".jsonl"):
            try:
                value = json.loads(text)["fill_g"]
            except (json.JSONDecodeError, KeyError):
                kinds.add("broken")
                continue
            assert not isinstance(value, int | float)
            kinds.add("text" if value else "empty")
        else:
            fields = text.rstrip("\n").split(";" if row.file == "wall.csv" else ",")
            if len(fields) != 3:
                kinds.add("fields")
                continue
            with pytest.raises(ValueError):
                float(fields[2].replace(",", "."))
            kinds.add("text" if fields[2] else "empty")
    assert {"binary", "text", "empty"} <= kinds
    assert kinds & {"broken", "fields"}


def test_good_rows_carry_their_value_and_simulated_time(first_cycle) -> None:
    _, actions = first_cycle
    rows = [a for a in actions if isinstance(a, Row) and a.value is not None]
    for row in rows[::97]:
        text = row.data.decode()
        if row.file.endswith(".jsonl"):
            record = json.loads(text)
            stamp, value = record["time"], record["fill_g"]
        else:
            sep = ";" if row.file == "wall.csv" else ","
            stamp, _ident, raw = text.rstrip("\n").split(sep)
            value = float(raw.replace(",", "."))
        assert value == row.value
        assert datetime.fromisoformat(stamp) - START == pytest.approx(
            timedelta(seconds=row.t), abs=timedelta(milliseconds=1)
        )


def test_some_rows_are_written_in_two_pieces(first_cycle) -> None:
    _, actions = first_cycle
    split = [a for a in actions if isinstance(a, Row) and a.split]
    assert split
    assert all(0 < a.split < len(a.data) - 1 for a in split)


def test_schedule_announces_each_cause_and_rotates_the_diameter_log(first_cycle) -> None:
    _, actions = first_cycle
    notes = [a for a in actions if isinstance(a, Note) and a.text.startswith("start:")]
    assert len(notes) == len(EXTRUSION_LINE.causes)
    rotations = [a for a in actions if isinstance(a, Rotate)]
    assert [(r.file, round(r.t)) for r in rotations] == [
        ("od_gauge.csv", round(_cause("od", ROTATE).start))
    ]


def test_a_clear_signal_comes_within_30_seconds_and_history_covers_the_baseline() -> None:
    # Demo pace: the first cause that moves a chart starts within 30 s of the live start, and
    # each gauge's history holds at least the demo config's baseline (25 points).
    from linewatch.config.loading import load_config

    demo = load_config(Path(__file__).parents[3] / "linewatch" / "demo" / "line.toml")
    value_causes = [c for c in EXTRUSION_LINE.causes if c.kind in (SHIFT, SPREAD, DRIFT)]
    assert min(c.start for c in value_causes) <= 30
    assert EXTRUSION_LINE.history_points >= demo.monitor.baseline
    assert _cause("od", SILENT).end - _cause("od", SILENT).start > demo.monitor.stale_after


def test_demo_config_matches_the_simulated_files() -> None:
    from linewatch.config.loading import load_config

    demo = load_config(Path(__file__).parents[3] / "linewatch" / "demo" / "line.toml")
    columns = {g.column: g for g in EXTRUSION_LINE.gauges}
    assert {c.column for c in demo.characteristics} == set(columns)
    for c in demo.characteristics:
        assert c.subgroup_size == columns[c.column].subgroup
    for g in EXTRUSION_LINE.gauges:
        matching = [
            f for f in demo.feeds if any(fnmatch.fnmatch(g.file, Path(p).name) for p in f.paths)
        ]
        assert len(matching) == 1, g.file
        feed = matching[0]
        assert feed.layout == ("jsonl" if g.fmt == "jsonl" else "wide")
        assert feed.decimal == ("," if g.fmt == "csv-semicolon" else ".")


def _file_bytes(actions, name: str) -> bytes:
    return b"".join(
        a.data for a in actions if isinstance(a, Row | Header) and a.file == name
    )


def test_writer_honours_duration_and_writes_complete_rotated_files(tmp_path: Path) -> None:
    speed = 150.0
    began = time.monotonic()
    stats = write_feeds(tmp_path, generate(3, RATE, START), speed=speed, duration=2.5)
    elapsed = time.monotonic() - began
    assert 2.5 <= elapsed < 4.5
    assert stats.rotations == 1  # the rotation is due at 200 s simulated = 1.33 s wall
    assert (tmp_path / "od_gauge.csv.1").exists()
    _, expected = collect(generate(3, RATE, START), ONE_CYCLE * 3)
    for g in EXTRUSION_LINE.gauges:
        parts = [tmp_path / f"{g.file}.1", tmp_path / g.file]
        written = b"".join(p.read_bytes() for p in parts if p.exists())
        assert written.endswith(b"\n")
        # Everything written is exactly the generated stream, from its start, row by row.
        assert _file_bytes(expected, g.file).startswith(written)
        assert written.count(b"\n") >= 40 * g.subgroup
    # Simulated time runs `speed` times faster than the wall clock.
    last = max(
        datetime.fromisoformat(line.split(b",")[0].decode())
        for line in (tmp_path / "od_gauge.csv").read_bytes().splitlines()[1:]
        if line[:1] == b"2"
    )
    simulated = (last - START).total_seconds()
    assert speed * (stats.seconds - 1.5) < simulated <= speed * stats.seconds + 1


def test_partial_lines_do_not_hold_back_the_pace(tmp_path: Path) -> None:
    # At a high speed the split rows' pauses add up to more than the whole run: they must
    # overlap the schedule, not be slept one after the other (which took seconds longer).
    stats = write_feeds(tmp_path, generate(3, RATE, START), speed=300.0, duration=1.0)
    assert stats.split_rows * PARTIAL_PAUSE > 2.0  # the pauses alone, if slept in turn
    assert stats.seconds < stats.split_rows * PARTIAL_PAUSE
    for g in EXTRUSION_LINE.gauges:  # every split row was completed
        written = b"".join(p.read_bytes() for p in (tmp_path / f"{g.file}.1", tmp_path / g.file)
                           if p.exists())
        assert written.endswith(b"\n")
        _, expected = collect(generate(3, RATE, START), ONE_CYCLE * 3)
        assert _file_bytes(expected, g.file).startswith(written)


def test_writer_stops_at_once_when_asked(tmp_path: Path) -> None:
    stop = threading.Event()
    timer = threading.Timer(0.5, stop.set)
    timer.start()
    began = time.monotonic()
    write_feeds(tmp_path, generate(3, RATE, START), speed=1.0, stop=stop)
    assert time.monotonic() - began < 2.0
    assert (tmp_path / "od_gauge.csv").read_bytes().endswith(b"\n")


def _run_cli(*argv: str, **kw) -> subprocess.CompletedProcess:
    return subprocess.run(
        [sys.executable, "-m", "linewatch", "simulate", *argv],
        capture_output=True,
        text=True,
        timeout=30,
        **kw,
    )


def test_cli_writes_the_three_logs_and_exits_zero(tmp_path: Path) -> None:
    out = tmp_path / "line"
    done = _run_cli("--out", str(out), "--duration", "1s", "--speed", "20", "--seed", "4")
    assert done.returncode == 0, done.stderr
    for g in EXTRUSION_LINE.gauges:
        assert (out / g.file).read_bytes().endswith(b"\n")
    assert "material lot change" in done.stdout


def test_cli_stops_cleanly_on_sigterm(tmp_path: Path) -> None:
    proc = subprocess.Popen(
        [sys.executable, "-m", "linewatch", "simulate", "--out", str(tmp_path)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        # SIGTERM once every gauge has written (not after a guessed pause)
        logs = [tmp_path / g.file for g in EXTRUSION_LINE.gauges]
        deadline = time.monotonic() + 15
        while (not all(p.exists() and p.stat().st_size for p in logs)
               and time.monotonic() < deadline):
            time.sleep(0.05)
        proc.send_signal(signal.SIGTERM)
        _out, err = proc.communicate(timeout=10)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 0, err
    for g in EXTRUSION_LINE.gauges:
        assert (tmp_path / g.file).read_bytes().endswith(b"\n")


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (("--rate", "0"), "--rate"),
        (("--speed", "-1"), "--speed"),
        (("--duration", "soon"), "--duration"),
    ],
)
def test_cli_rejects_bad_options_in_one_line(tmp_path: Path, argv, message: str) -> None:
    done = _run_cli("--out", str(tmp_path), *argv)
    assert done.returncode == 2
    assert message in done.stderr
    assert len(done.stderr.strip().splitlines()) == 1
    assert not os.listdir(tmp_path)


def test_cli_rejects_an_out_path_that_is_a_file(tmp_path: Path) -> None:
    target = tmp_path / "taken"
    target.write_text("x")
    done = _run_cli("--out", str(target), "--duration", "1")
    assert done.returncode == 2
    assert "not a folder" in done.stderr



def test_history_is_quiet_so_the_first_alarms_are_the_scheduled_causes(tmp_path: Path) -> None:
    # The history is drawn so that `linewatch check` finds no signal in it under every rule of
    # both sets, with the demo config's baseline: a demo starts calm.
    from linewatch.config.loading import load_config

    demo = load_config(Path(__file__).parents[3] / "linewatch" / "demo" / "line.toml")
    for action in generate(5, RATE, START):
        if action.t >= 0:
            break
        if isinstance(action, Row | Header):
            with (tmp_path / action.file).open("ab") as fh:
                fh.write(action.data)
    for g in EXTRUSION_LINE.gauges:
        config = tmp_path / f"{g.key}.toml"
        layout = "jsonl" if g.fmt == "jsonl" else "wide"
        decimal = "," if g.fmt == "csv-semicolon" else "."
        config.write_text(
            f'[[feed]]\npaths = ["{g.file}"]\nlayout = "{layout}"\ndecimal = "{decimal}"\n'
            f'[[characteristic]]\nname = "{g.key}"\ncolumn = "{g.column}"\n'
            f"subgroup_size = {g.subgroup}\nbaseline = {demo.monitor.baseline}\n"
            'rules = "nelson,western-electric"\n'
        )
        done = subprocess.run(
            [sys.executable, "-m", "linewatch", "check", str(tmp_path / g.file), "-c",
             str(config), "--format", "jsonl"],
            capture_output=True, text=True, timeout=60,
        )
        records = [json.loads(line) for line in done.stdout.splitlines()]
        assert done.returncode == 0, (g.file, done.stderr, records[:5])
        summary = next(r for r in records if r["type"] == "summary")
        assert summary["points"] == EXTRUSION_LINE.history_points * g.subgroup


def test_a_second_run_continues_the_logs_without_going_back_in_time(tmp_path: Path) -> None:
    first = _run_cli("--out", str(tmp_path), "--duration", "1s", "--speed", "10")
    assert first.returncode == 0, first.stderr
    before = (tmp_path / "od_gauge.csv").read_bytes()
    second = _run_cli("--out", str(tmp_path), "--duration", "1s", "--speed", "10", "--seed", "9")
    assert second.returncode == 0, second.stderr
    assert "continuing" in second.stdout
    after = (tmp_path / "od_gauge.csv").read_bytes()
    assert after.startswith(before) and len(after) > len(before)
    stamps = [
        datetime.fromisoformat(line.split(b",")[0].decode())
        for line in after.splitlines()
        if line[:1] == b"2"
    ]
    assert stamps == sorted(stamps)


def test_each_demo_characteristic_offers_reasons_that_fit_it() -> None:
    """The demo's reason list per characteristic names the special causes the simulator gives
    that characteristic, and none that belong to another machine (no die wear at the scale)."""
    from linewatch.config.loading import load_config
    from linewatch.simulation.line import DRIFT, HUG, SHIFT, SPREAD, STUCK

    demo = load_config(Path(__file__).parents[3] / "linewatch" / "demo" / "line.toml")
    gauge_of = {g.column: g.key for g in EXTRUSION_LINE.gauges}
    lists = {c.name: c.reasons for c in demo.characteristics}
    assert len({tuple(r) for r in lists.values()}) == len(lists)  # each has its own list
    for c in demo.characteristics:
        words = " ".join(c.reasons).lower()
        for cause in EXTRUSION_LINE.causes:
            if cause.gauge == gauge_of[c.column] and cause.kind in (SHIFT, DRIFT, SPREAD, STUCK,
                                                                    HUG):
                label = cause.label.split(":")[0]
                assert label in words, (c.name, label)
    fill = " ".join(lists["fill-weight"]).lower()
    assert not any(word in fill for word in ("die", "lens", "puller", "wall"))
