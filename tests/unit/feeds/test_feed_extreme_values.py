"""Finite but extreme values (1e308) must not poison a line: they are rejected as out of range
with file, line and reason, limits that are not finite never reach the store, the other
characteristics and feeds go on, and every drawing copes with extreme but finite numbers.

Reference for the overflow: IEEE 754 binary64, whose largest finite value is about 1.8e308
(`sys.float_info.max`), so (1e308)**2 and 1e308 - (-1e308) are infinite.
"""

from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

from linewatch.config.model import FeedConfig
from linewatch.domain.errors import BadLimits
from linewatch.domain.records import MAX_MAGNITUDE
from linewatch.engine.limits import estimate_limits
from linewatch.engine.live import CharacteristicEngine
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup
from linewatch.feeds.row_parser import RowParser
from linewatch.feeds.whole_file import read_log
from linewatch.present.scales import cell_of, fraction_of, padded_span
from tests.integration.watch.helpers import records, start_watch, stop, wait_caught_up

HUGE = ["1e308", "-1e308", "1.7e308", "1e101", "-2e150"]


def test_the_bound_keeps_squares_and_differences_finite() -> None:
    # the reason for the bound, checked against the float maximum (IEEE 754 binary64)
    biggest_difference = 2 * MAX_MAGNITUDE
    assert math.isfinite(biggest_difference**2 * 1e100)
    assert not math.isfinite(1e308 - (-1e308))
    assert math.sqrt(sys.float_info.max) > MAX_MAGNITUDE


def both(tmp_path: Path, data: bytes, feed: FeedConfig | None = None):
    p = tmp_path / "log.csv"
    p.write_bytes(data)
    feed = feed or FeedConfig(paths=[])
    lines = data.split(b"\n")
    if lines[-1] == b"":
        lines.pop()
    return RowParser(feed, str(p), None).parse(lines, 1), read_log(str(p), feed)


@pytest.mark.parametrize("huge", HUGE)
def test_a_huge_value_is_rejected_as_out_of_range_with_its_line(tmp_path: Path,
                                                               huge: str) -> None:
    body = "".join(f"t{k},{12 + k / 100},2.0\n" for k in range(3000))  # the numpy path too
    data = f"time,od,wall\nt,{huge},2.0\n{body}t,2.5,{huge}\n".encode()
    for b in both(tmp_path, data):
        assert [r.line for r in b.rejected] == [2, 3003]
        assert all("out of range" in r.reason for r in b.rejected)
        assert "'od'" in b.rejected[0].reason and "'wall'" in b.rejected[1].reason
        assert all(r.file.endswith("log.csv") for r in b.rejected)
        assert len(b.values["od"]) == 3000
        assert np.all(np.abs(np.asarray(b.values["od"])) <= MAX_MAGNITUDE)


def test_a_huge_first_value_still_makes_its_column_a_characteristic(tmp_path: Path) -> None:
    for b in both(tmp_path, b"time,od,wall\nt,1e308,2.0\nt,12.0,2.1\n"):
        assert list(b.values) == ["od", "wall"]
        assert [r.line for r in b.rejected] == [2]


def test_json_lines_and_long_rows_reject_huge_values_too(tmp_path: Path) -> None:
    jl = tmp_path / "log.jsonl"
    jl.write_bytes(b'{"od": 12.0}\n{"od": 1e308}\n{"od": "-1e200"}\n{"od": 12.1}\n')
    b = read_log(str(jl), FeedConfig(paths=[], layout="jsonl"))
    assert list(b.values["od"]) == [12.0, 12.1]
    assert [r.line for r in b.rejected] == [2, 3]
    assert all("out of range" in r.reason for r in b.rejected)
    long = b"time,characteristic,value\nt,od,12.0\nt,od,1e308\nt,od,12.1\n"
    for lb in both(tmp_path, long, FeedConfig(paths=[], layout="long")):
        assert list(lb.values["od"]) == [12.0, 12.1]
        assert "out of range" in lb.rejected[0].reason


def test_non_finite_limits_are_refused_and_the_live_engine_says_so_once() -> None:
    with pytest.raises(BadLimits):
        estimate_limits(np.array([1e308, -1e308, 1.0]), np.array([np.inf, 1e308]), 1,
                        "range")
    setup = ChartSetup(name="od", rules=tuple(resolve_rules(parse_rule_list("we1"))), baseline=3)
    eng = CharacteristicEngine(setup)
    with np.errstate(all="ignore"):
        out = eng.push([1e308, -1e308, 1.0])
        again = eng.push([2.0])
    assert out.limits is None and eng.limits is None
    assert out.problem is not None and "not finite" in out.problem
    assert again.problem is None  # said once


def test_scales_stay_finite_at_the_float_maximum() -> None:
    lo, hi = padded_span([1.7e308, -1.7e308, 0.0], 0.06)
    assert math.isfinite(lo) and math.isfinite(hi) and lo < -1.6e308 and hi > 1.6e308
    assert fraction_of(0.0, lo, hi) == pytest.approx(0.5)
    assert cell_of(1.7e308, lo, hi, 11) == 10 and cell_of(-1.7e308, lo, hi, 11) == 0
    lo, hi = padded_span([1e300], 0.04)  # one huge value: the span must not collapse
    assert lo < 1e300 < hi
    assert fraction_of(float("nan"), 0.0, 1.0) == 0.0


def test_every_drawing_copes_with_extreme_values() -> None:
    from linewatch.faces.tui.glyphs import ASCII, UNICODE
    from linewatch.faces.tui.widgets.box_plot import draw_box_plot
    from linewatch.faces.tui.widgets.control_chart import LABEL_WIDTH, draw_control_chart
    from linewatch.faces.tui.widgets.margin_gauge import gauge_bar
    from linewatch.faces.tui.widgets.spark_cell import SparkCell
    from linewatch.present import view
    from linewatch.present.close_up import box_figures
    from linewatch.report.build import ChartTrace
    from linewatch.report.svg_charts import control_chart_svg

    values = [1e308, -1e308, 12.0, 1.7e308, 1e-300]
    for glyphs in (UNICODE, ASCII):
        cell = SparkCell(values, [""] * 5, 10, glyphs).to_text()
        assert len(cell.plain.split("\n")[0]) == 10
        bar = gauge_bar(1e308, 1e308, -1e308, 1.7e308, 30, glyphs)
        assert len(bar.plain) == 30
        chart = view.ChartView("individuals", values, list(range(5)), [""] * 5,
                               center=1e308, ucl=1.7e308, lcl=-1.7e308, sigma=1e308,
                               phase_starts=[0])
        assert draw_control_chart(chart, 20 + LABEL_WIDTH, 12, glyphs, lsl=-1e308, usl=1e308)
        draw_box_plot(box_figures([-1e308, 0.0, 1.0, 2.0, 1e308]), -1e308, 1e308, 40, glyphs)
    trace = ChartTrace("individuals", list(range(5)), values, [1e308] * 5, [1.7e308] * 5,
                       [-1.7e308] * 5, flagged={0})
    svg = control_chart_svg(trace, -1e308, 1e308)
    assert "nan" not in svg.lower() and "inf" not in svg.lower()


def test_watch_rejects_huge_values_and_keeps_every_feed_going(tmp_path: Path) -> None:
    rng = np.random.default_rng(3)  # invented test data
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    rows = [f"t{k},{v:.4f},{w:.4f}\n" for k, (v, w) in
            enumerate(zip(rng.normal(12, 0.01, 40), rng.normal(2, 0.01, 40), strict=True))]
    rows[5] = "t5,1e308,2.0\n"
    rows[6] = "t6,-1e308,2.0\n"
    a.write_text("time,od,wall\n" + "".join(rows))
    b.write_text("time,x\n" + "".join(f"t{k},{v:.4f}\n"
                                      for k, v in enumerate(rng.normal(5, 0.1, 40))))
    state = tmp_path / "state"
    proc = start_watch([str(a), str(b)], state, "--baseline", "20")
    wait_caught_up(state, a)
    wait_caught_up(state, b)
    out, err = stop(proc)
    recs = records(out)
    assert "IntegrityError" not in out + err
    assert not [r for r in recs if r["type"] == "error"]
    rejected = [r for r in recs if r["type"] == "rejected"]
    assert sorted(r["line"] for r in rejected) == [7, 8]
    assert all("out of range" in r["reason"] for r in rejected)
    limits = {r["characteristic"] for r in recs if r["type"] == "limits"}
    assert limits == {"od", "wall", "x"}


def test_huge_configured_numbers_are_refused_with_the_key(tmp_path: Path) -> None:
    import subprocess

    from linewatch.config.loading import load_config
    from linewatch.domain.errors import ConfigError

    cfg = tmp_path / "line.toml"
    cfg.write_text('[[characteristic]]\nname = "od"\nusl = 1e300\n')
    with pytest.raises(ConfigError, match=r"usl.*out of range"):
        load_config(str(cfg))
    log = tmp_path / "log.csv"
    log.write_text("od\n1\n2\n3\n")
    run = subprocess.run([sys.executable, "-m", "linewatch", "check", str(log), "--center", "0",
                          "--sigma", "1e300"], capture_output=True, text=True, timeout=60)
    assert run.returncode == 2 and "--sigma" in run.stderr and "out of range" in run.stderr
