"""`linewatch check` as a user runs it: real files, a real process, exit codes and records.

Expected values come from the definitions (Phase I limits recomputed here with numpy from the
published formulas, d2(2) = 1.128 from the factor table) rather than from linewatch's output.
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from linewatch.cli.commands.check import _signal_lines, analyse
from linewatch.domain.jsonl import dumps, signal_record


def lw(*args: str, stdin: str | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, input=stdin, timeout=60)


def write_log(path: Path, values, header: str = "time,part,od", bad: dict | None = None) -> Path:
    rows = [header]
    for i, v in enumerate(values):
        rows.append(f"2026-03-02T06:{i // 60:02d}:{i % 60:02d},P{i},{v}")
    for line_no, text in (bad or {}).items():
        rows.insert(line_no - 1, text)
    path.write_text("\n".join(rows) + "\n")
    return path


def records(text: str) -> list[dict]:
    return [json.loads(line) for line in text.splitlines() if line.strip()]


def test_in_control_data_exits_0_with_phase_one_limits(tmp_path):
    x = np.array([10.0, 10.2, 9.9, 10.1, 10.0, 9.8, 10.1, 10.0, 9.9, 10.2] * 3)
    log = write_log(tmp_path / "a.csv", x)
    res = lw("check", str(log), "--format", "jsonl", "--rules", "we1")
    assert res.returncode == 0, res.stderr
    recs = records(res.stdout)
    ind = next(r for r in recs if r["type"] == "limits" and r["chart"] == "individuals")
    sigma = np.abs(np.diff(x)).mean() / 1.1283791670955126  # d2(2) = 2/sqrt(pi)
    assert ind["center"] == pytest.approx(x.mean())
    assert ind["ucl"] == pytest.approx(x.mean() + 3 * sigma)
    assert set(ind) == {"type", "characteristic", "chart", "center", "ucl", "lcl", "sigma"}
    summary = next(r for r in recs if r["type"] == "summary")
    assert summary["points"] == 30 and summary["rejected"] == 0


def test_a_point_beyond_the_limits_is_a_signal_with_index_and_line_and_exit_1(tmp_path):
    x = [10.0, 10.2, 9.9, 10.1, 10.0, 9.8, 10.1, 10.0, 9.9, 10.2] * 3 + [14.0]
    log = write_log(tmp_path / "a.csv", x)
    res = lw("check", str(log), "--format", "jsonl", "--baseline", "30", "--rules", "we1")
    assert res.returncode == 1
    sig = [r for r in records(res.stdout) if r["type"] == "signal"]
    first = next(s for s in sig if s["chart"] == "individuals")
    assert first == {"type": "signal", "characteristic": "od", "chart": "individuals",
                     "rule": "we1", "index": 30, "line": 32, "value": 14.0}


def test_junk_rows_are_reported_with_file_and_line_and_do_not_stop_the_run(tmp_path):
    x = [10.0, 10.2, 9.9, 10.1, 10.0, 9.8] * 4
    log = write_log(tmp_path / "a.csv", x, bad={5: "2026-03-02T06:00:59,P9,abc",
                                                9: "2026-03-02T06:01:00,P10"})
    res = lw("check", str(log), "--format", "jsonl")
    rej = [r for r in records(res.stdout) if r["type"] == "rejected"]
    assert [r["line"] for r in rej] == [5, 9]
    assert all(r["file"].endswith("a.csv") and r["reason"] for r in rej)
    summary = next(r for r in records(res.stdout) if r["type"] == "summary")
    assert summary["points"] == 24 and summary["rejected"] == 2


def test_semicolon_and_decimal_comma_and_stdin(tmp_path):
    text = "time;od\n" + "".join(f"t{i};{10 + (i % 3) * 0.1:.1f}".replace(".", ",") + "\n"
                                 for i in range(20))
    res = lw("check", "-", "--format", "jsonl", stdin=text)
    signals = [r for r in records(res.stdout) if r["type"] == "signal"]
    assert res.returncode == (1 if signals else 0), res.stderr  # exit 1 exactly when signals
    summary = next(r for r in records(res.stdout) if r["type"] == "summary")
    assert summary["points"] == 20
    assert summary["mean"] == pytest.approx(np.mean([10 + (i % 3) * 0.1 for i in range(20)]))


def test_subgroups_leave_out_a_trailing_incomplete_one(tmp_path):
    rng = np.random.default_rng(5)  # seeded test data, not a reference value
    log = write_log(tmp_path / "a.csv", np.round(rng.normal(10, 1, 53), 3))
    res = lw("check", str(log), "--format", "jsonl", "--subgroup-size", "5")
    recs = records(res.stdout)
    charts = {r["chart"] for r in recs if r["type"] == "limits"}
    assert charts == {"xbar", "range"}
    summary = next(r for r in recs if r["type"] == "summary")
    assert summary["left_out_values"] == 3
    res = lw("check", str(log), "--format", "jsonl", "--subgroup-size", "12")
    assert {r["chart"] for r in records(res.stdout) if r["type"] == "limits"} == {"xbar", "stdev"}


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["missing.csv"], "missing.csv"),
        (["{log}", "--column", "nope"], "od"),
        (["{log}", "--center", "10"], "--center and --sigma"),
        (["{log}", "--center", "10", "--sigma", "0"], "σ ≤ 0"),
        (["{log}", "--lsl", "11", "--usl", "9"], "--lsl must be below --usl"),
        (["{log}", "--baseline", "500"], "needed"),
        (["{log}", "--rules", "n9"], "unknown rule"),
        (["{log}", "--rules", "we1,cusum", "--cusum-h", "0"], "--cusum-h must be between"),
        (["{log}", "--cusum-k", "0.5", "--cusum-h", "4", "--cusum-headstart", "4"],
         "--cusum-headstart must be below --cusum-h"),
        (["{log}", "--ewma-lambda", "nan"], "--ewma-lambda must be between"),
    ],
)
def test_usage_and_input_errors_are_one_line_and_exit_2(tmp_path, args, message):
    log = write_log(tmp_path / "a.csv", [10.0, 10.5, 9.5, 10.2, 9.9] * 4)
    res = lw("check", *[a.format(log=log) for a in args])
    assert res.returncode == 2
    assert message in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1 and "Traceback" not in res.stderr


def test_text_report_names_the_rule_in_plain_words(tmp_path):
    x = [10.0, 10.2, 9.9, 10.1, 10.0, 9.8, 10.1, 10.0, 9.9, 10.2] * 3 + [14.0]
    log = write_log(tmp_path / "a.csv", x)
    res = lw("check", str(log), "--baseline", "30", "--lsl", "9", "--usl", "11")
    assert res.returncode == 1
    assert "outside the control limits" in res.stdout
    assert "Cpk" in res.stdout and "false alarms per 1,000 points" in res.stdout


def test_directly_formatted_signal_lines_equal_the_generic_records(tmp_path):
    from linewatch.cli.options import CheckOptions
    from linewatch.config.overrides import ChartOverrides

    rng = np.random.default_rng(11)  # seeded test data
    log = write_log(tmp_path / "a.csv", np.round(rng.normal(0, 1, 400), 4))
    options = CheckOptions(logs=(str(log),), chart=ChartOverrides(rules="nelson", baseline=50))
    (a,), _, _ = analyse(options)
    assert a.result.firings
    expected = [dumps(signal_record("od", f.chart, f.rule, f.index, int(a.column.lines[f.row]),
                                    f.value)) for f in a.result.firings]
    assert _signal_lines(a, with_file=False) == expected


def test_with_two_logs_each_signal_names_the_file_and_line_it_was_written_at(tmp_path):
    # the rows go on from one log to the next; a far-out value is planted in each (test data)
    first = [10.0, 10.2, 9.9, 10.1] * 8 + [14.0]
    second = [10.1, 9.8, 10.0, 10.2] * 5 + [6.0]
    a = write_log(tmp_path / "a.csv", first)
    b = write_log(tmp_path / "b.csv", second)
    res = lw("check", str(a), str(b), "--rules", "we1", "--baseline", "32", "--format", "jsonl")
    assert res.returncode == 1, res.stderr
    beyond = [r for r in records(res.stdout)
              if r["type"] == "signal" and r["chart"] == "individuals"]
    # line 1 is the header, so the n-th value of a file sits on line n + 1
    assert [(Path(r["file"]).name, r["line"], r["value"]) for r in beyond] == [
        ("a.csv", len(first) + 1, 14.0), ("b.csv", len(second) + 1, 6.0)]


def test_json_lines_are_recognised_without_a_config(tmp_path):
    log = tmp_path / "scale.jsonl"
    values = [500.1, 499.8, 500.3, 499.9, 500.0] * 6
    log.write_text("".join(json.dumps({"time": f"t{i}", "bag": f"B{i}", "fill_g": v}) + "\n"
                           for i, v in enumerate(values)))
    res = lw("check", str(log), "--format", "jsonl")
    signals = [r for r in records(res.stdout) if r["type"] == "signal"]
    assert res.returncode == (1 if signals else 0), res.stderr  # exit 1 exactly when signals
    summary = next(r for r in records(res.stdout) if r["type"] == "summary")
    assert summary["characteristic"] == "fill_g" and summary["points"] == 30
    assert summary["mean"] == pytest.approx(np.mean(values))


@pytest.mark.parametrize(("lsl", "usl"), [("0", "20"), ("9.5", "10.5")])
def test_ppm_out_of_spec_is_written_in_plain_digits(tmp_path, lsl, usl):
    from scipy import stats

    rng = np.random.default_rng(7)
    x = np.round(10 + 0.2 * rng.standard_normal(60), 3)
    log = write_log(tmp_path / "a.csv", x)
    res = lw("check", str(log), "--baseline", "30", "--lsl", lsl, "--usl", usl)
    line = next(s for s in res.stdout.splitlines() if "expected out of spec" in s)
    shown = line.split("expected out of spec")[1].strip()
    # the normal-model tail with the overall SD (scipy.stats.norm), as the summary defines it
    sd = float(np.std(x, ddof=1))
    out = 1e6 * (stats.norm.cdf(float(lsl), x.mean(), sd) + stats.norm.sf(float(usl), x.mean(), sd))
    if out < 0.001:
        assert shown == "< 0.001 ppm"
    else:
        assert "e" not in shown
        assert float(shown.split()[0].replace(",", "")) == pytest.approx(out, rel=0.01)


def test_a_large_capability_index_is_written_in_plain_digits(tmp_path):
    rng = np.random.default_rng(7)
    x = np.round(10 + 0.01 * rng.standard_normal(60), 4)
    log = write_log(tmp_path / "a.csv", x)
    res = lw("check", str(log), "--baseline", "30", "--lsl", "-1000", "--usl", "1000")
    line = next(s for s in res.stdout.splitlines() if s.strip().startswith("Pp "))
    assert "e+" not in line
    pp = float(line.split()[1])
    # Pp = (USL - LSL) / 6s with the sample SD (numpy, ddof=1)
    assert pp == pytest.approx(2000 / (6 * x.std(ddof=1)), rel=1e-3)
def test_a_constant_column_is_reported_and_the_others_are_charted(tmp_path):
    # a column whose every value is the same has moving ranges of 0, so σ̂ = MR̄/d2 = 0 and
    # no control limits exist (common practice: limits need variation to estimate from)
    rng = np.random.default_rng(4)  # seeded test data
    od = np.round(rng.normal(12.0, 0.01, 30), 4)
    ring = np.round(rng.normal(3.0, 0.1, 30), 3)
    log = tmp_path / "c.csv"
    log.write_text("time,od,wall,ring\n" + "".join(
        f"t{k},{a},2.000,{b}\n" for k, (a, b) in enumerate(zip(od, ring, strict=True))))
    res = lw("check", str(log))
    assert res.returncode == 2 and "Traceback" not in res.stderr
    assert "== od:" in res.stdout and "== ring:" in res.stdout
    wall = [line for line in res.stdout.splitlines() if "wall" in line]
    assert len(wall) == 1 and "not charted" in wall[0] and "sigma estimated as 0" in wall[0]
    res = lw("check", str(log), "--format", "jsonl")
    assert res.returncode == 2
    recs = records(res.stdout)
    assert {r["characteristic"] for r in recs if r["type"] == "summary"} == {"od", "ring"}
    (skip,) = [r for r in recs if r["type"] == "not-charted"]
    assert skip["characteristic"] == "wall" and skip["values"] == 30
    assert "sigma estimated as 0" in skip["problem"]
