"""`linewatch check` with the EWMA and CUSUM detectors, as a user runs it.

The statistics are recomputed here from the published recursions (EWMA: Roberts 1959, exact
limits as in Lucas & Saccucci, Technometrics 32(1), 1990; tabular CUSUM: Page 1954, as in
Montgomery's Introduction to Statistical Quality Control), written as plain loops. Published
run lengths are quoted from memory: CUSUM k = 0.5, h = 4: ARL₀ 168, ARL(1σ) 8.38; h = 5: 465
and 10.4 (Montgomery's CUSUM table); EWMA λ = 0.1, L = 2.814: ARL₀ ≈ 500 (Lucas & Saccucci);
Shewhart rule 1 at a 1σ shift 43.9 (1/(1 − Φ(2) + Φ(−4)), a textbook figure).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest


def lw(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, timeout=60)


def write_log(path: Path, values) -> Path:
    rows = ["part,od"] + [f"P{i},{float(v)!r}" for i, v in enumerate(values)]
    path.write_text("\n".join(rows) + "\n")
    return path


def records(text: str) -> list[dict]:
    return [json.loads(line) for line in text.splitlines() if line.strip()]


def plain_ewma(z, lam, width):
    """Indices where the EWMA of z (from 0) is beyond its exact limits, and the statistics."""
    out, stat, prev = [], [], 0.0
    for i, x in enumerate(z, start=1):
        prev = lam * x + (1 - lam) * prev
        stat.append(prev)
        half = width * math.sqrt(lam / (2 - lam) * (1 - (1 - lam) ** (2 * i)))
        if abs(prev) > half:
            out.append((i - 1, "up" if prev > 0 else "down"))
    return out, stat


def plain_cusum(z, k, h):
    out, hi, lo = [], 0.0, 0.0
    for i, x in enumerate(z):
        hi = max(0.0, x - k + hi)
        lo = max(0.0, -x - k + lo)
        if hi > h:
            out.append((i, "up", hi))
        if lo > h:
            out.append((i, "down", lo))
    return out


@pytest.fixture
def shifted_log(tmp_path):
    rng = np.random.default_rng(20260302)
    x = np.round(np.concatenate([rng.normal(12.0, 0.02, 150), rng.normal(12.02, 0.02, 150)]), 4)
    return write_log(tmp_path / "od.csv", x), x


def test_known_limits_give_the_plain_recursions_firings_limits_and_sides(shifted_log):
    log, x = shifted_log
    res = lw("check", str(log), "--format", "jsonl", "--rules", "ewma,cusum", "--center", "12",
             "--sigma", "0.02", "--ewma-lambda", "0.1", "--ewma-width", "2.7", "--cusum-h", "4")
    assert res.returncode == 1, res.stderr
    recs = records(res.stdout)
    z = (x - 12.0) / 0.02
    ewma_expected, stat = plain_ewma(z, 0.1, 2.7)
    cusum_expected = plain_cusum(z, 0.5, 4.0)
    ewma = [r for r in recs if r["type"] == "signal" and r["chart"] == "ewma"]
    cusum = [r for r in recs if r["type"] == "signal" and r["chart"] == "cusum"]
    assert [(r["index"], r["side"]) for r in ewma] == ewma_expected
    assert all(r["rule"] == "ewma" for r in ewma)
    assert [r["value"] for r in ewma] == pytest.approx([12 + stat[i] * 0.02
                                                        for i, _ in ewma_expected])
    assert [(r["index"], r["side"]) for r in cusum] == [(i, s) for i, s, _ in cusum_expected]
    assert [r["value"] for r in cusum] == pytest.approx([c * 0.02 for *_, c in cusum_expected])
    assert cusum and all(r["line"] == r["index"] + 2 for r in cusum)  # header is line 1
    limits = {r["chart"]: r for r in recs if r["type"] == "limits"}
    half = 2.7 * math.sqrt(0.1 / 1.9) * 0.02
    assert limits["ewma"]["center"] == pytest.approx(12.0)
    assert limits["ewma"]["ucl"] == pytest.approx(12.0 + half)
    assert limits["ewma"]["lcl"] == pytest.approx(12.0 - half)
    assert limits["ewma"]["varies"] is True
    assert limits["cusum"]["ucl"] == pytest.approx(4.0 * 0.02)
    assert limits["cusum"]["lcl"] is None and limits["cusum"]["varies"] is False


def test_estimated_limits_feed_the_detectors_the_phase_one_centre_and_sigma(shifted_log):
    log, x = shifted_log
    res = lw("check", str(log), "--format", "jsonl", "--rules", "cusum", "--baseline", "100")
    recs = records(res.stdout)
    base = x[:100]
    sigma = np.abs(np.diff(base)).mean() / 1.1283791670955126  # MR̄/d2(2), d2 = 2/√π
    expected = plain_cusum((x - base.mean()) / sigma, 0.5, 5.0)
    got = [(r["index"], r["side"]) for r in recs if r["type"] == "signal"]
    assert got == [(i, s) for i, s, _ in expected]


def test_the_summary_carries_the_run_length_at_each_shift(shifted_log):
    log, _ = shifted_log
    res = lw("check", str(log), "--format", "jsonl", "--rules", "cusum")
    summary = next(r for r in records(res.stdout) if r["type"] == "summary")
    arl = summary["arl_by_shift"]
    assert list(arl) == ["0", "0.5", "1", "1.5", "2", "3"]
    assert arl["0"] == pytest.approx(465, rel=0.005)  # Montgomery's table, from memory
    assert arl["1"] == pytest.approx(10.4, rel=0.01)
    assert summary["arl0"] == pytest.approx(arl["0"])  # the budget counts the detector too


def test_subgroups_give_the_shifts_of_the_individual_values_too(shifted_log):
    log, _ = shifted_log
    res = lw("check", str(log), "--format", "jsonl", "--rules", "we1", "--subgroup-size", "4")
    summary = next(r for r in records(res.stdout) if r["type"] == "summary")
    # a shift of δ individual σ moves the means of 4 by 2δ of their σ (σ/√n, common practice)
    assert summary["arl_by_shift_of_values"]["0.5"] == pytest.approx(
        summary["arl_by_shift"]["1"])
    assert summary["arl_by_shift"]["1"] == pytest.approx(43.9, rel=0.002)  # textbook figure


def test_config_tables_set_the_detectors_and_the_command_line_wins(tmp_path, shifted_log):
    log, _ = shifted_log
    cfg = tmp_path / "line.toml"
    cfg.write_text("[[characteristic]]\nname = 'od'\nrules = ['ewma', 'cusum']\n"
                   "ewma = { lambda = 0.1, width = 2.814 }\ncusum = { h = 4 }\n")
    res = lw("check", str(log), "-c", str(cfg), "--compare-rules", "ewma;cusum")
    assert res.returncode == 2 and "reads no log" in res.stderr
    res = lw("check", "--compare-rules", "ewma;cusum", "--ewma-lambda", "0.1",
             "--ewma-width", "2.814", "--cusum-h", "4")
    assert res.returncode == 0, res.stderr
    rows = {line.split()[0]: line.split()[1:] for line in res.stdout.splitlines()
            if line.startswith("  ")}
    assert rows["0"][-1] == "168"  # Montgomery's table, from memory
    # Lucas & Saccucci's ≈ 500 is for asymptotic limits; the exact limits, narrower at the
    # start of a phase, give a little less
    assert 475 <= float(rows["0"][-2]) <= 500
    assert rows["1"][-1] == "8.38"  # Montgomery, from memory
    res = lw("check", str(log), "-c", str(cfg), "--format", "jsonl", "--cusum-h", "5")
    recs = records(res.stdout)
    limits = {r["chart"]: r for r in recs if r["type"] == "limits"}
    assert limits["ewma"]["parameters"] == {"lambda": 0.1, "width": 2.814}
    assert limits["cusum"]["parameters"] == {"k": 0.5, "h": 5.0, "headstart": 0.0}


def test_the_text_report_prints_the_power_table_within_80_columns(shifted_log):
    log, _ = shifted_log
    res = lw("check", str(log), "--rules", "we1")
    lines = res.stdout.splitlines()
    at = next(i for i, line in enumerate(lines) if "detection power" in line)
    table = lines[at:at + 4]
    assert all(len(line) <= 80 for line in lines[at:at + 6])
    assert table[2].split()[5] == "43.9"  # Shewhart at 1σ, textbook figure
    assert table[3].endswith("2.70")  # 1000/370.4 false alarms (common practice)


def test_compare_rules_prints_the_sets_side_by_side_in_80_columns():
    res = lw("check", "--compare-rules", "we1;western-electric;nelson;ewma;cusum;we1,cusum")
    assert res.returncode == 0, res.stderr
    lines = res.stdout.splitlines()
    assert all(len(line) <= 80 for line in lines)
    one = next(line for line in lines if line.split()[:1] == ["1"])
    assert one.split()[1:3] == ["43.9", "9.22"]  # Shewhart; Western Electric 1-4 (published)
    assert "≈" in res.stdout  # a combination is simulated and says so
    bad = lw("check", "--compare-rules", "we1;n9")
    assert bad.returncode == 2 and "'n9'" in bad.stderr
