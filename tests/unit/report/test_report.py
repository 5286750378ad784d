"""The shift handover report: figures checked against numpy/scipy, every alarm with who and why,
limits and feed events of the period, the audit verdict, local times with their offset, and the
three formats; end to end through real `watch`, `alarms ack` and `report` processes."""

from __future__ import annotations

import csv
import io
import json
import math
import os
import re
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from linewatch.alarms.book import AlarmBook
from linewatch.config.loading import parse_config
from linewatch.domain.clock import local_time
from linewatch.domain.records import FeedEvent, Limits
from linewatch.report.as_csv import render_csv
from linewatch.report.as_html import render_html
from linewatch.report.as_markdown import render_markdown
from linewatch.report.build import _subgroup_size, build_report
from linewatch.store.actor import Actor
from linewatch.store.db import Store

ROOT = Path(__file__).resolve().parents[3]
T0 = 1_780_000_000.0  # a fixed moment; the period is [T0, T0 + 8 h)
SHIFT = 8 * 3600.0
LSL, USL = 11.95, 12.05
SIGMA = 0.012

CONFIG = parse_config(
    """
[[characteristic]]
name = "outer-diameter"
column = "od_mm"
unit = "mm"
lsl = 11.95
usl = 12.05
reasons = ["die wear", "material lot change", "no cause found"]
"""
)


@pytest.fixture()
def shift_store(tmp_path: Path):
    """A store holding one shift: points (and some from before it), limits, a new baseline,
    alarms (one acknowledged, one left open), feed events and an audit trail."""
    rng = np.random.default_rng(2024)
    values = 12.0 + SIGMA * rng.standard_normal(200)
    store = Store(tmp_path / "state")
    book = AlarmBook(store, CONFIG)
    book.load_config(CONFIG, now=T0 - 100)
    history = store.history
    # 20 points the evening before (outside the period), then 200 in the shift.
    history.add_points("outer-diameter", 0, [12.5] * 20, list(range(2, 22)), "od.csv",
                       received_at=T0 - 3600)
    history.add_points("outer-diameter", 20, values.tolist(), list(range(22, 222)), "od.csv",
                       received_at=T0 + 600)
    history.record_limits(
        Limits("outer-diameter", "individuals", 12.0, 12.0 + 3 * SIGMA, 12.0 - 3 * SIGMA, SIGMA),
        reason="baseline", now=T0 + 60,
    )
    history.record_limits(
        Limits("outer-diameter", "moving-range", 1.128 * SIGMA, 3.267 * 1.128 * SIGMA, 0.0,
               0.853 * SIGMA),
        reason="baseline", now=T0 + 60,
    )
    history.record_limits(
        Limits("outer-diameter", "individuals", 12.001, 12.0 + 3 * SIGMA, 12.0 - 3 * SIGMA,
               SIGMA, phase=1, start_index=150),
        reason="new die fitted", now=T0 + 7200, actor="maria", new_baseline=True,
    )
    # One we1 firing at 61, acknowledged; the judged range then reaches 69 (61 + clear_after
    # 8), so it returns and closes, and the we4 firing at 70 opens a second alarm.
    book.observe_chart("outer-diameter", "individuals", 60, 62, {"we1": [61]}, now=T0 + 1800)
    first = store.alarms.all()[0]
    book.acknowledge([first.id], "material lot change", "lot 24-117 on the hopper",
                     now=T0 + 1800 + 135, actor=Actor("maria", "10.0.0.7"))
    book.observe_chart("outer-diameter", "individuals", 63, 70, {"we4": [70]}, now=T0 + 3600)
    history.add_feed_event(FeedEvent("rotated", "od.csv", "old file now od.csv.1"), at=T0 + 900)
    history.add_feed_event(FeedEvent("stale", "wall.csv", "no row for 10m"), at=T0 + 5000)
    yield store, values
    store.close()


def _report(store: Store):
    return build_report(store, T0, T0 + SHIFT, CONFIG, now=T0 + SHIFT + 60)


def test_figures_match_numpy_and_scipy(shift_store) -> None:
    store, values = shift_store
    part = _report(store).characteristics[0]
    n = len(values)
    assert part.n == n  # the 20 points from before the period are left out
    assert part.mean == pytest.approx(values.mean(), rel=1e-12)
    assert part.stdev == pytest.approx(values.std(ddof=1), rel=1e-12)
    # 95% t-interval of the mean (scipy.stats.t.interval).
    lo, hi = stats.t.interval(0.95, n - 1, loc=values.mean(), scale=stats.sem(values))
    assert part.ci95 == pytest.approx((lo, hi), rel=1e-9)
    # Cp with the chart's σ within (the newest individuals limits), chi-square interval.
    cp = (USL - LSL) / (6 * SIGMA)
    assert part.cp == pytest.approx(cp, rel=1e-9)
    chi_lo, chi_hi = stats.chi2.ppf([0.025, 0.975], n - 1)
    assert part.cp_ci95 == pytest.approx(
        (cp * math.sqrt(chi_lo / (n - 1)), cp * math.sqrt(chi_hi / (n - 1))), rel=1e-6
    )
    # Cpk and Bissell's (1990) interval: Ĉpk ± z·√(1/(9n) + Ĉpk²/(2(n−1))).
    cpk = min(USL - values.mean(), values.mean() - LSL) / (3 * SIGMA)
    half = stats.norm.ppf(0.975) * math.sqrt(1 / (9 * n) + cpk**2 / (2 * (n - 1)))
    assert part.cpk == pytest.approx(cpk, rel=1e-9)
    assert part.cpk_ci95 == pytest.approx((cpk - half, cpk + half), rel=1e-6)
    # Expected ppm outside spec under normality with the overall SD (scipy.stats.norm).
    sd = values.std(ddof=1)
    ppm = 1e6 * (stats.norm.cdf(LSL, values.mean(), sd) + stats.norm.sf(USL, values.mean(), sd))
    assert part.ppm_out == pytest.approx(ppm, rel=1e-6)
    assert part.alarms_by_rule == {"we1": 1, "we4": 1}


def test_every_alarm_says_who_when_how_long_and_why(shift_store) -> None:
    store, _ = shift_store
    report = _report(store)
    by_rule = {a.rule: a for a in report.alarms}
    acked, still = by_rule["we1"], by_rule["we4"]
    assert acked.acknowledged_by == "maria"
    assert acked.acknowledged_at == pytest.approx(T0 + 1800 + 135)
    assert acked.unacknowledged_for == pytest.approx(135)
    assert (acked.reason, acked.note) == ("material lot change", "lot 24-117 on the hopper")
    assert not acked.still_unacknowledged
    # Never acknowledged: unacknowledged from raising to the end of the period.
    assert still.still_unacknowledged and still.acknowledged_by == ""
    assert still.unacknowledged_for == pytest.approx(SHIFT - 3600)
    assert still.state == "unacknowledged"
    assert report.alarm_tally() == (
        "2 alarms were open in this period: 1 acknowledged (median wait 2m15s, longest 2m15s), "
        "1 not acknowledged (the oldest waiting 7h00m)."
    )


def test_limits_baselines_feed_events_and_audit(shift_store) -> None:
    store, _ = shift_store
    report = _report(store)
    kinds = [(x.chart, x.phase, x.new_baseline, x.reason) for x in report.limits]
    assert ("individuals", 1, True, "new die fitted") in kinds
    assert ("individuals", 0, False, "baseline") in kinds
    baseline = next(x for x in report.limits if x.new_baseline)
    assert baseline.actor == "maria" and baseline.start_index == 150
    assert [(f.kind, f.file) for f in report.feed_events] == [
        ("rotated", "od.csv"), ("stale", "wall.csv")
    ]
    assert report.audit_ok
    # Entries in the period: limits-set ×2, new-baseline, raised ×2, the we1 alarm's
    # returned-to-normal, acknowledged and closed; the config load came before the period.
    actions = sorted(e.action for e in store.audit.entries(T0))
    assert actions == sorted(
        ["limits-set", "limits-set", "new-baseline", "raised", "raised", "returned-to-normal",
         "acknowledged", "closed"]
    )
    assert report.audit_entries == len(actions)


def test_a_tampered_audit_trail_is_reported(shift_store) -> None:
    store, _ = shift_store
    path = store.path
    store.close()
    conn = sqlite3.connect(path)
    conn.execute("DROP TRIGGER audit_no_update")
    conn.execute("UPDATE audit SET actor = 'someone else' WHERE action = 'acknowledged'")
    conn.commit()
    conn.close()
    reopened = Store(path.parent, create=False)
    try:
        report = _report(reopened)
        assert not report.audit_ok
        assert "altered" in report.audit_message
        assert "BROKEN" in render_markdown(report)
        assert "BROKEN" in render_html(report)
    finally:
        reopened.close()


def test_times_are_local_with_their_offset(monkeypatch) -> None:
    # 2026-06-01 12:00 UTC is 17:30 in India (UTC+05:30, no daylight saving) — a fact of the
    # time zone database, not of linewatch.
    monkeypatch.setenv("TZ", "Asia/Kolkata")
    time.tzset()
    try:
        assert local_time(1_780_315_200.0) == "2026-06-01 17:30:00 +05:30"
    finally:
        monkeypatch.delenv("TZ")
        time.tzset()


def test_subgroup_size_comes_back_from_xbar_and_range_limits(tmp_path: Path) -> None:
    # d2(5) = 2.326 (Montgomery, Introduction to SQC, Appendix VI): R̄ = d2·σ, σ(X̄) = σ/√5.
    store = Store(tmp_path / "s")
    try:
        limits = {
            "xbar": Limits("od", "xbar", 12.0, 12.016, 11.984, SIGMA / math.sqrt(5)),
            "range": Limits("od", "range", 2.326 * SIGMA, 4.918 * SIGMA, 0.0, 0.864 * SIGMA),
        }
        assert _subgroup_size(store, None, "od", limits) == 5
        limits["range"] = Limits("od", "range", 1.693 * SIGMA, 4.358 * SIGMA, 0.0, SIGMA)
        limits["xbar"] = Limits("od", "xbar", 12.0, 12.02, 11.98, SIGMA / math.sqrt(3))
        assert _subgroup_size(store, None, "od", limits) == 3  # d2(3) = 1.693, same table
    finally:
        store.close()


def markdown_tables(text: str) -> list[list[str]]:
    """The Markdown tables of a text, each as its lines."""
    tables: list[list[str]] = []
    current: list[str] = []
    for line in [*text.splitlines(), ""]:
        if line.startswith("|"):
            current.append(line)
        elif current:
            tables.append(current)
            current = []
    return tables


def test_markdown_tables_are_well_formed(shift_store) -> None:
    store, _ = shift_store
    text = render_markdown(_report(store))
    tables = markdown_tables(text)
    # characteristics, alarms, alarm performance, most frequent (none shown twice: left out),
    # still open at the end, limits, feed health
    assert len(tables) == 6
    for table in tables:
        widths = {len(re.findall(r"(?<!\\)\|", row)) for row in table}
        assert len(widths) == 1, table[:3]
        assert re.fullmatch(r"\|(---\|)+", table[1])
    assert "lot 24-117 on the hopper" in text
    assert re.search(r"\d\d:\d\d:\d\d [+-]\d\d:\d\d", text)


class _Collect(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.attrs: list[tuple[str, str | None]] = []

    def handle_starttag(self, tag, attrs) -> None:
        self.tags.append(tag)
        self.attrs.extend(attrs)


def test_html_is_one_self_contained_file_with_a_chart(shift_store) -> None:
    store, values = shift_store
    text = render_html(_report(store))
    parser = _Collect()
    parser.feed(text)
    assert parser.tags.count("svg") == 1
    assert "script" not in parser.tags and "link" not in parser.tags
    assert not [v for k, v in parser.attrs if k in ("src", "href")]
    assert "@media print" in text
    # Every plotted point is drawn: a dot, or a square when it lies inside an alarm.
    drawn = parser.tags.count("circle") + text.count('class="flag"')
    assert drawn == len(values)
    assert text.count('class="flag"') == 2  # points 61 and 70


def test_csv_reads_back_into_a_spreadsheet(shift_store) -> None:
    store, values = shift_store
    rows = list(csv.reader(io.StringIO(render_csv(_report(store)))))
    chars = [r for r in rows if r and r[0] == "characteristic" and r[1] != "characteristic"]
    header = next(r for r in rows if r and r[0] == "section" and "mean" in r)
    record = dict(zip(header, chars[0], strict=True))
    assert float(record["mean"]) == pytest.approx(values.mean(), rel=1e-12)
    assert int(record["n"]) == len(values)
    alarms = [r for r in rows if r and r[0] == "alarm"]
    assert len(alarms) == 2


def test_an_empty_period_says_so(tmp_path: Path) -> None:
    Store(tmp_path / "state").close()
    done = subprocess.run(
        [sys.executable, "-m", "linewatch", "report", "--state-dir", str(tmp_path / "state"),
         "--from", "2026-03-02T06:00", "--to", "2026-03-02T14:00"],
        capture_output=True, text=True, timeout=60,
    )
    assert done.returncode == 0, done.stderr
    assert "Nothing was recorded between 2026-03-02 06:00:00" in done.stdout
    for fmt in ("html", "csv"):
        other = subprocess.run(
            [sys.executable, "-m", "linewatch", "report", "--state-dir",
             str(tmp_path / "state"), "--since", "1h", "--format", fmt],
            capture_output=True, text=True, timeout=60,
        )
        assert other.returncode == 0, other.stderr
        assert other.stdout


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["--from", "yesterday"], "--from"),
        (["--since", "soon"], "--since"),
        (["--from", "2026-03-02T14:00", "--to", "2026-03-02T06:00"], "period"),
    ],
)
def test_bad_periods_get_one_line(tmp_path: Path, argv: list[str], message: str) -> None:
    Store(tmp_path / "state").close()
    done = subprocess.run(
        [sys.executable, "-m", "linewatch", "report", "--state-dir", str(tmp_path / "state"),
         *argv],
        capture_output=True, text=True, timeout=60,
    )
    assert done.returncode == 2
    assert message in done.stderr and len(done.stderr.strip().splitlines()) == 1


def test_a_folder_without_a_store_is_refused(tmp_path: Path) -> None:
    done = subprocess.run(
        [sys.executable, "-m", "linewatch", "report", "--state-dir", str(tmp_path)],
        capture_output=True, text=True, timeout=60,
    )
    assert done.returncode == 2
    assert "not a linewatch state directory" in done.stderr


def _wait_for(predicate, seconds: float) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if predicate():
            return True
        time.sleep(0.1)
    return False


def test_report_of_a_real_watch_run(tmp_path: Path) -> None:
    # The recorded lab sample, watched by a real collector, one alarm acknowledged from the
    # shell, then the report: N and mean agree with the file read by the csv module.
    log = tmp_path / "lab_long.csv"
    shutil.copy(ROOT / "sample_feeds" / "lab_long.csv", log)
    config = tmp_path / "line.toml"
    config.write_text(
        (ROOT / "config" / "lab_long.toml").read_text(encoding="utf-8")
        .replace("../sample_feeds/lab_long.csv", "lab_long.csv"),
        encoding="utf-8",
    )
    state = tmp_path / "state"
    env = {**os.environ, "TZ": "Europe/Berlin"}
    watcher = subprocess.Popen(
        [sys.executable, "-m", "linewatch", "watch", "-c", str(config), "--state-dir",
         str(state), "--no-ui", "--format", "jsonl", "--no-bell"],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
    )
    expected: dict[str, list[float]] = {}
    with log.open(newline="") as fh:
        for row in csv.DictReader(fh):
            try:
                expected.setdefault(row["characteristic"], []).append(float(row["value"]))
            except ValueError:
                continue  # the two junk rows

    def all_in() -> bool:
        if not (state / "linewatch.db").exists():
            return False
        conn = sqlite3.connect(state / "linewatch.db")
        try:
            (count,) = conn.execute("SELECT COUNT(*) FROM points").fetchone()
        except sqlite3.OperationalError:
            return False
        finally:
            conn.close()
        return count == sum(len(v) for v in expected.values())

    try:
        assert _wait_for(all_in, 30), "the watcher did not store every point"
    finally:
        watcher.send_signal(signal.SIGTERM)
        watcher.communicate(timeout=20)

    listed = subprocess.run(
        [sys.executable, "-m", "linewatch", "alarms", "list", "--all", "--format", "jsonl",
         "--state-dir", str(state)], capture_output=True, text=True, timeout=60, check=True,
    )
    alarms = [json.loads(line) for line in listed.stdout.splitlines()]
    tensile = next(a for a in alarms if a["characteristic"] == "tensile-strength"
                   and a["rule"] == "we1" and a["first_index"] == 45)
    subprocess.run(
        [sys.executable, "-m", "linewatch", "alarms", "ack", str(tensile["id"]), "--reason",
         "no cause found", "--note", "sample re-clamped and retested", "--state-dir",
         str(state)], capture_output=True, text=True, timeout=60, check=True,
    )
    out = tmp_path / "handover.csv"
    done = subprocess.run(
        [sys.executable, "-m", "linewatch", "report", "--state-dir", str(state), "--since",
         "1h", "--format", "csv", "-o", str(out)],
        capture_output=True, text=True, timeout=60, env=env,
    )
    assert done.returncode == 0, done.stderr
    rows = list(csv.reader(out.open(newline="", encoding="utf-8")))
    header = next(r for r in rows if r and r[0] == "section" and "mean" in r)
    figures = {
        r[1]: dict(zip(header, r, strict=True))
        for r in rows if r and r[0] == "characteristic" and r[1] != "characteristic"
    }
    columns = {"tensile-strength": "tensile_mpa", "burst-pressure": "burst_bar"}
    for name, column in columns.items():
        assert int(figures[name]["n"]) == len(expected[column])
        assert float(figures[name]["mean"]) == pytest.approx(np.mean(expected[column]))
    # Each alarm's episodes in the report (read from the audit trail) number what
    # `alarms list` says the alarm counted, and the performance section counts every raise.
    listed_episodes = {str(a["id"]): a["episodes"] for a in alarms}
    report_episodes: dict[str, int] = {}
    for r in rows:
        if r and r[0] == "episode":
            report_episodes[r[1]] = report_episodes.get(r[1], 0) + 1
    assert report_episodes == listed_episodes
    figures_of_load = {r[1]: r[2] for r in rows if r and r[0] == "performance"}
    assert int(figures_of_load["alarms_shown"]) == sum(a["episodes"] for a in alarms)
    acked = [r for r in rows if r and r[0] == "alarm" and r[1] == str(tensile["id"])]
    assert acked and "sample re-clamped and retested" in acked[0]
    # Berlin is UTC+01:00 in winter and +02:00 in summer; either way the offset is shown.
    assert re.search(r" \+0[12]:00$", acked[0][2])
    html = subprocess.run(
        [sys.executable, "-m", "linewatch", "report", "--state-dir", str(state), "--since",
         "1h", "--format", "html"], capture_output=True, text=True, timeout=60, env=env,
    )
    assert html.returncode == 0 and html.stdout.count("<svg") == 2


def test_a_long_shift_keeps_the_chart_small_and_still_shows_its_extremes() -> None:
    from linewatch.report.build import ChartTrace
    from linewatch.report.svg_charts import control_chart_svg

    rng = np.random.default_rng(5)
    values = (12.0 + SIGMA * rng.standard_normal(30_000)).tolist()
    values[12_345] = 12.2  # one wild reading must still reach the top of the drawing
    n = len(values)
    trace = ChartTrace("individuals", list(range(n)), values, [12.0] * n, [12.036] * n,
                       [11.964] * n, flagged={12_345})
    svg = control_chart_svg(trace, LSL, USL)
    assert len(svg) < 60_000
    assert svg.count("<circle") == 0 and svg.count('class="flag"') == 1
    points = re.search(r'<polyline points="([^"]+)"', svg).group(1).split()
    ys = [float(p.split(",")[1]) for p in points]
    flag_y = float(re.search(r'<rect x="[\d.]+" y="([\d.]+)"[^>]*class="flag"', svg).group(1))
    # The envelope's highest point is the wild reading, where its marker is drawn (SVG y grows
    # downwards; the marker is a 7-px square centred on the point).
    assert min(ys) == pytest.approx(flag_y + 3.5, abs=0.06)
    assert sorted(ys)[1] > min(ys) + 20  # and it stands well clear of the rest


def test_readings_have_the_same_decimals_in_the_report_and_on_the_screen(shift_store) -> None:
    """±0.05 mm: a reading needs 3 decimals (12.012), not 4 significant digits (12.01)."""
    from linewatch.present.snapshot import characteristic_view

    store, values = shift_store
    md = render_markdown(_report(store))
    row = next(line for line in md.splitlines() if line.startswith("| outer-diameter"))
    assert f"| {values.mean():.3f} |" in row and "| 11.950 … 12.050 |" in row
    limits_row = next(line for line in md.splitlines() if "new die fitted" in line)
    assert "| 12.001 | 12.036 | 11.964 |" in limits_row
    cv = characteristic_view(store, AlarmBook(store, CONFIG), CONFIG.characteristics[0],
                             now=T0 + SHIFT)
    assert cv.decimals == 3
    with_two = parse_config(CONFIG_TEXT_WITH_DECIMALS)
    assert _report_with(store, with_two).characteristics[0].decimals == 2
    assert characteristic_view(store, AlarmBook(store, with_two), with_two.characteristics[0],
                               now=T0 + SHIFT).decimals == 2


CONFIG_TEXT_WITH_DECIMALS = """
[[characteristic]]
name = "outer-diameter"
unit = "mm"
lsl = 11.95
usl = 12.05
decimals = 2
"""


def _report_with(store: Store, config):
    return build_report(store, T0, T0 + SHIFT, config, now=T0 + SHIFT + 60)


def test_the_close_up_phases_give_pp_and_ppk_from_the_overall_sd(shift_store) -> None:
    """The ppm beside them is from the overall SD too; Pp = (USL − LSL) / 6s, Ppk the nearer
    side over 3s, s the sample SD (numpy, ddof=1), per phase of limits."""
    from linewatch.present.snapshot import characteristic_view

    store, _values = shift_store
    cv = characteristic_view(store, AlarmBook(store, CONFIG), CONFIG.characteristics[0],
                             now=T0 + SHIFT, points=1000, detail=True)
    stored = np.array([12.5] * 20 + _values.tolist())
    for phase, (lo, hi) in zip(cv.phases, [(0, 150), (150, None)], strict=True):
        seg = stored[lo:hi]
        s = seg.std(ddof=1)
        assert phase.pp == pytest.approx((USL - LSL) / (6 * s), rel=1e-9)
        assert phase.ppk == pytest.approx(min(USL - seg.mean(), seg.mean() - LSL) / (3 * s),
                                          rel=1e-9)


HOSTILE_NOTE = "<script>alert(1)</script> | =cmd|' /C calc'!A0 [x](javascript:alert(2)) `"


@pytest.fixture()
def hostile_store(shift_store):
    """The shift plus text from outside that tries to break out: a note with HTML, a pipe, a
    formula and a link; a feed file and detail that are formulas; a limit with a real negative
    centre line and a formula as its reason."""
    store, values = shift_store
    book = AlarmBook(store, CONFIG)
    second = next(a for a in store.alarms.all() if not a.acknowledged)
    book.acknowledge([second.id], "no cause found", HOSTILE_NOTE, now=T0 + 4000,
                     actor=Actor("=maria", "10.0.0.7"))
    store.history.add_feed_event(FeedEvent("rotated", "@SUM(A1).csv", "-2+3"), at=T0 + 950)
    store.history.record_limits(Limits("offset", "individuals", -0.5, 0.1, -1.1, 0.2),
                                reason="+1+1", now=T0 + 100)
    return store, values


def test_markdown_cells_stay_cells_and_html_stays_text(hostile_store) -> None:
    """Rendered with markdown-it-py (CommonMark with GFM tables, raw HTML allowed as on many
    viewers): no element comes from the data, every row keeps its cells, the note reads as
    written."""
    from html import unescape

    from markdown_it import MarkdownIt

    store, _ = hostile_store
    html = MarkdownIt("commonmark", {"html": True}).enable("table").render(
        render_markdown(_report(store)))
    # the report's own code spans (the audit anchor and its command) are the only ones
    html = re.sub(r"<code>linewatch[^<]*</code>", "", html)
    assert "<script" not in html and "<a " not in html and "<code>" not in html
    for table in re.findall(r"<table>(.*?)</table>", html, re.S):
        header = len(re.findall(r"<th[ >]", table))
        rows = re.findall(r"<tr>(.*?)</tr>", table, re.S)[1:]
        assert rows and all(len(re.findall(r"<td[ >]", row)) == header for row in rows)
    cells = [unescape(c) for c in re.findall(r"<td[^>]*>(.*?)</td>", html, re.S)]
    assert HOSTILE_NOTE.strip() in cells


def test_csv_text_cells_cannot_start_a_formula_but_numbers_stay_numbers(hostile_store) -> None:
    """Formula injection (OWASP 'CSV injection'): a cell starting with = + - @ is run by a
    spreadsheet; text cells get a leading quote, real numbers are left as they are."""
    store, _ = hostile_store
    rows = list(csv.reader(io.StringIO(render_csv(_report(store)))))
    cells = [cell for row in rows for cell in row]
    for cell in cells:
        if cell[:1] in ("=", "+", "-", "@"):
            float(cell)  # only a real number may start so
    assert HOSTILE_NOTE in cells and "'=maria" in cells  # only a leading = is run
    assert "'@SUM(A1).csv" in cells and "'-2+3" in cells and "'+1+1" in cells
    offset = next(row for row in rows if row[:1] == ["limits"] and "offset" in row)
    assert "-0.5" in offset and "-1.1" in offset


def test_the_html_limits_have_the_readings_decimals(shift_store) -> None:
    store, _ = shift_store
    text = render_html(_report(store))
    rows = [[re.sub(r"<[^>]+>", "", c) for c in re.findall(r"<td[^>]*>.*?</td>", r, re.S)]
            for r in re.findall(r"<tr[^>]*>(.*?)</tr>", text, re.S)]
    first = next(r for r in rows if "baseline" in r and "individuals" in r)
    assert first[5:8] == ["12.000", "12.036", "11.964"]  # CL 12, not "12": ±0.05 mm, 3 decimals
    moving_range = next(r for r in rows if "baseline" in r and "moving-range" in r)
    assert moving_range[7] == "0"  # a dispersion limit is not on the readings' scale
# -- alarms per characteristic and chart, episodes, alarm performance -----------------------

HOSTILE = "od|gauge\x1b[2J"  # a pipe and an escape sequence in a characteristic name


@pytest.fixture()
def episode_store(tmp_path: Path):
    """A store whose alarms come back: the individuals alarm of HOSTILE has three episodes
    (firings 61; 75; 91 still active), an out-of-spec alarm of "wall" counts 2 parts below LSL
    and 1 above USL, and a moving-range alarm of HOSTILE, raised last, is acknowledged."""
    store = Store(tmp_path / "state")
    book = AlarmBook(store)
    book.observe_spec("wall", 0, [1.0, 0.1, 0.2, 1.0, 1.0, 2.5], 0.5, 2.0, now=T0 + 100)
    book.observe_chart(HOSTILE, "individuals", 60, 70, {"we1": [61]}, now=T0 + 600)
    book.observe_chart(HOSTILE, "individuals", 71, 90, {"we2": [75]}, now=T0 + 660)
    book.observe_chart(HOSTILE, "individuals", 91, 91, {"we1": [91], "we5": [91]},
                       now=T0 + 700)
    book.observe_chart(HOSTILE, "moving-range", 10, 12, {"we1": [11]}, now=T0 + 800)
    mr = next(a for a in store.alarms.all() if a.chart == "moving-range")
    book.acknowledge([mr.id], "no cause found", now=T0 + 890, actor=Actor("ana", ""))
    yield store
    store.close()


def _episode_report(store: Store):
    return build_report(store, T0, T0 + 3600, None, now=T0 + 3600)


def test_alarms_are_grouped_per_characteristic_and_chart_with_their_counts(
    episode_store,
) -> None:
    report = _episode_report(episode_store)
    groups = [(a.characteristic, a.chart) for a in report.alarms]
    # Sorted by characteristic then chart, whatever the order they were raised in.
    assert groups == [(HOSTILE, "individuals"), (HOSTILE, "moving-range"), ("wall", "individuals")]
    ind, _mr, spec = report.alarms
    # Firings 61 (we1), 75 (we2), 91 (we1 and we5): three points, three episodes, first-out we1.
    assert (ind.rule, ind.signals, ind.episodes) == ("we1", 3, 3)
    assert ind.counts == "we1 ×2 we2 ×1 we5 ×1"
    # Measurements 0.1 and 0.2 below LSL 0.5, 2.5 above USL 2.0: 3 parts to quarantine.
    assert (spec.below_lsl, spec.above_usl, spec.signals) == (2, 1, 3)
    assert ind.below_lsl is None and ind.above_usl is None


def test_episodes_come_from_the_audit_trail(episode_store) -> None:
    report = _episode_report(episode_store)
    ind = report.alarms[0]
    eps = [(e.first_index, e.last_index, e.returned_at) for e in report.episodes_of(ind.id)]
    # 61 returns at 69 (clear_after 8) in the pass at +600; 75 returns at 83 in the pass at
    # +660; 91 is still active.
    assert eps == [(61, 61, T0 + 600), (75, 75, T0 + 660), (91, None, None)]
    text = render_markdown(report)
    assert "points 61, " in text and "points 75, " in text and "points 91–…" in text
    rows = list(csv.reader(io.StringIO(render_csv(report))))
    episodes = [r for r in rows if r and r[0] == "episode"]
    assert len(episodes) == 3 + 1 + 1  # individuals ×3, moving range, out of spec


def test_the_performance_section_in_every_format(episode_store) -> None:
    report = _episode_report(episode_store)
    perf = report.performance
    assert perf is not None
    # The store's record begins at +100 s (its first entry), so the rates are over the 3500 s
    # watched. Shown: out-of-spec raised, individuals raised + re-raised twice, moving range
    # raised: 5 in 3500 s = 0.857 per 10 minutes (by hand); windows from +100 s: [100, 700)
    # holds +100, +600, +660 -> peak 3.
    assert perf.since == T0 + 100
    assert perf.annunciations == 5 and perf.peak_ten_minutes == 3
    assert perf.most_frequent == [(report.alarms[0].id, 3)]
    # The moving-range alarm: raised at +800, acknowledged at +890: 90 s (by hand).
    assert perf.acknowledge_times == [90.0]
    # None closed: the moving-range alarm is acknowledged but its firing at 11 has not yet
    # returned (that takes point 19). Oldest first.
    ind, mr, spec = report.alarms
    assert [(o.alarm_id, o.acknowledged) for o in perf.open_at_end] == [
        (spec.id, False), (ind.id, False), (mr.id, True)
    ]
    md = render_markdown(report)
    html = render_html(report)
    for text in (md, html):
        assert "Alarm performance" in text and "ISA-18.2" in text
        assert "0.86" in text and "1m30s" in text
        assert "very likely acceptable" in text
    assert "\x1b" not in md  # the hostile name is shown visibly (safe_text.visible)
    rows = list(csv.reader(io.StringIO(render_csv(report))))
    figures = {r[1]: r[2] for r in rows if r and r[0] == "performance"}
    assert float(figures["alarms_per_10_minutes_mean"]) == pytest.approx(5 * 600 / 3500)
    assert float(figures["acknowledge_median_seconds"]) == 90.0


def test_markdown_cells_with_a_pipe_stay_escaped(episode_store) -> None:
    text = render_markdown(_episode_report(episode_store))
    for row in (line for line in text.splitlines() if line.startswith("|")):
        assert HOSTILE.split("|")[0] + "|" not in row.replace("\\|", "")
    # every table row of one table has the same number of unescaped pipes
    tables = markdown_tables(text)
    for table in tables:
        assert len({len(re.findall(r"(?<!\\)\|", row)) for row in table}) == 1, table[:3]
    assert "- #" in text and "od\\|gauge" in text  # the episode list escapes it too


def test_a_wait_that_began_before_the_period_is_measured_from_the_raise(tmp_path: Path) -> None:
    store = Store(tmp_path / "state")
    try:
        book = AlarmBook(store)
        book.observe_chart("od", "individuals", 0, 1, {"we1": [1]}, now=T0 - 300)
        (alarm,) = store.alarms.all()
        book.acknowledge([alarm.id], "no cause found", now=T0 + 60, actor=Actor("ana", ""))
        report = build_report(store, T0, T0 + 600, None, now=T0 + 600)
        short = build_report(store, T0, T0 + 300, None, now=T0 + 300)
    finally:
        store.close()
    # Ten minutes watched: a true 10-minute mean; five minutes: the report says it extrapolates.
    assert "extrapolated" not in render_markdown(report)
    assert "less than 10 minutes watched" in render_markdown(short)
    perf = report.performance
    assert perf is not None
    # Raised 5 minutes before the period, acknowledged 1 minute into it: 360 s; still open
    # (not returned) at the end, 15 minutes old; not shown in the period itself.
    assert perf.acknowledge_times == [360.0]
    assert [(o.age, o.acknowledged) for o in perf.open_at_end] == [(900.0, True)]
    assert perf.annunciations == 0


def test_a_flood_the_collector_announced_is_in_the_report(tmp_path: Path) -> None:
    store = Store(tmp_path / "state")
    try:
        book = AlarmBook(store)
        # Eleven alarms (one per characteristic) within a minute: more than the default 10 in
        # 10 minutes, a flood; ten minutes after the last one it is over.
        for k in range(11):
            book.observe_chart(f"c{k}", "individuals", 0, 0, {"we1": [0]}, now=T0 + 5 * k)
        book.check_flood(now=T0 + 60)
        book.check_flood(now=T0 + 60 + 600)
        report = build_report(store, T0, T0 + 3600, None, now=T0 + 3600)
    finally:
        store.close()
    perf = report.performance
    assert perf is not None
    assert [(f.started, f.ended, f.peak) for f in perf.floods] == [(T0 + 60, T0 + 660, 11)]
    # The first 10-minute window holds all eleven: in flood by the report's count as well.
    assert (perf.flood_windows, perf.windows) == (1, 6)
    text = render_markdown(report)
    assert "### Floods announced on the screen" in text and "| 10m00s | 11 |" in text
