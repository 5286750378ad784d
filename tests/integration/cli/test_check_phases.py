"""`check --phase-by / --phase-at / --versus` as a user runs it: the records and the page,
with the figures held to scipy.stats computed here from the same rows of the log."""

from __future__ import annotations

import csv
import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

ROOT = Path(__file__).resolve().parents[3]
LOG = ROOT / "sample_feeds" / "lot_change_speed.csv"
CONFIG = ROOT / "config" / "lot_change_speed.toml"


def _check(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "linewatch", "check", *args], cwd=ROOT,
                          capture_output=True, text=True, timeout=120)


def _rows() -> list[dict[str, str]]:
    with LOG.open(encoding="utf-8") as fh:
        good = []
        for row in csv.DictReader(fh):
            try:
                float(row["od_mm"]), float(row["wall_mm"])
            except (TypeError, ValueError):
                continue
            good.append(row)
        return good


@pytest.fixture(scope="module")
def records() -> list[dict]:
    done = _check(str(LOG), "-c", str(CONFIG), "--phase-by", "lot", "--versus",
                  "speed_setpoint", "--at", "21", "--format", "jsonl")
    assert done.returncode in (0, 1), done.stderr
    return [json.loads(line) for line in done.stdout.splitlines()]


def test_phases_follow_the_lot_column(records: list[dict]) -> None:
    phases = [r for r in records if r["type"] == "phase" and r["characteristic"] ==
              "outer-diameter"]
    rows = _rows()
    lots = [r["lot"] for r in rows]
    assert [p["label"] for p in phases] == ["lot R-2611", "lot R-2612"]
    assert [p["n"] for p in phases] == [lots.count("R-2611"), lots.count("R-2612")]
    od = np.array([float(r["od_mm"]) for r in rows if r["lot"] == "R-2612"])
    t = stats.t.ppf(0.975, od.size - 1) * od.std(ddof=1) / np.sqrt(od.size)
    assert phases[1]["mean"] == pytest.approx(od.mean())
    assert phases[1]["ci95"] == pytest.approx([od.mean() - t, od.mean() + t])


def test_comparison_against_scipy(records: list[dict]) -> None:
    rows = _rows()
    a = np.array([float(r["wall_mm"]) for r in rows if r["lot"] == "R-2611"])
    b = np.array([float(r["wall_mm"]) for r in rows if r["lot"] == "R-2612"])
    (cmp,) = [r for r in records if r["type"] == "comparison" and r["characteristic"] ==
              "wall-thickness"]
    welch = stats.ttest_ind(b, a, equal_var=False)  # the reference
    assert cmp["p_mean"] == pytest.approx(welch.pvalue, rel=1e-6)
    ci = welch.confidence_interval()
    assert cmp["difference_ci95"] == pytest.approx([ci.low, ci.high])
    assert cmp["p_spread"] == pytest.approx(stats.levene(a, b, center="median").pvalue,
                                            rel=1e-6)
    assert cmp["share_of_tolerance"] == pytest.approx((b.mean() - a.mean()) / (1.55 - 1.45))
    assert cmp["sentence"]


def test_regression_against_linregress(records: list[dict]) -> None:
    rows = _rows()
    x = np.array([float(r["speed_setpoint"]) for r in rows])
    y = np.array([float(r["od_mm"]) for r in rows])
    ref = stats.linregress(x, y)
    (reg,) = [r for r in records if r["type"] == "regression" and r["characteristic"] ==
              "outer-diameter"]
    assert reg["slope"] == pytest.approx(ref.slope)
    assert reg["intercept"] == pytest.approx(ref.intercept)
    assert reg["r2"] == pytest.approx(ref.rvalue ** 2)
    assert reg["p_value"] == pytest.approx(ref.pvalue, rel=1e-6)
    assert reg["mean_at"] == pytest.approx(ref.intercept + 21 * ref.slope)
    # the config's target 12.0: the setting on the fitted line
    assert reg["setting_for_target"] == pytest.approx((12.0 - ref.intercept) / ref.slope)
    lo, hi = reg["setting_for_target_ci95"]
    assert lo < reg["setting_for_target"] < hi


def test_phase_and_setting_columns_are_not_charted(records: list[dict]) -> None:
    summaries = {r["characteristic"] for r in records if r["type"] == "summary"}
    assert summaries == {"outer-diameter", "wall-thickness"}


def test_limits_first_carries_the_first_phase_over() -> None:
    done = _check(str(LOG), "-c", str(CONFIG), "--phase-by", "lot", "--limits", "first",
                  "--format", "jsonl")
    recs = [json.loads(line) for line in done.stdout.splitlines()]
    phases = [r for r in recs if r["type"] == "phase" and r["characteristic"] == "wall-thickness"]
    assert [p["limits"] for p in phases] == ["own", "first"]
    assert phases[1]["ucl"] == pytest.approx(phases[0]["ucl"])
    # the wider spread of lot R-2612 against the old limits: more signals than with its own
    own = _check(str(LOG), "-c", str(CONFIG), "--phase-by", "lot", "--format", "jsonl")
    own_phases = [json.loads(line) for line in own.stdout.splitlines()]
    own2 = [r for r in own_phases if r["type"] == "phase" and r["characteristic"] ==
            "wall-thickness"][1]
    assert phases[1]["signals"] > own2["signals"]


def test_phase_at_splits_at_plotted_points() -> None:
    done = _check(str(LOG), "-c", str(CONFIG), "--column", "outer-diameter", "--phase-at",
                  "120", "--format", "jsonl")
    phases = [json.loads(line) for line in done.stdout.splitlines()]
    phases = [p for p in phases if p["type"] == "phase"]
    assert [p["first_point"] for p in phases] == [0, 120]


def test_text_fits_80_columns() -> None:
    done = _check(str(LOG), "-c", str(CONFIG), "--phase-by", "lot", "--versus",
                  "speed_setpoint")
    assert done.returncode in (0, 1), done.stderr
    assert "phases: 2" in done.stdout and "regression on speed_setpoint" in done.stdout
    lines = done.stdout.splitlines()
    start = next(k for k, line in enumerate(lines) if "phases: 2" in line)
    block = lines[start:next(k for k in range(start, len(lines)) if not lines[k])]
    assert all(len(line) <= 80 for line in block), [x for x in block if len(x) > 80]


@pytest.mark.parametrize("fmt", ["html", "markdown"])
def test_the_page_is_one_self_contained_file(tmp_path: Path, fmt: str) -> None:
    out = tmp_path / f"analysis.{fmt}"
    done = _check(str(LOG), "-c", str(CONFIG), "--phase-by", "lot", "--versus",
                  "speed_setpoint", "--format", fmt, "-o", str(out))
    assert done.returncode in (0, 1), done.stderr
    assert done.stdout == ""
    text = out.read_text(encoding="utf-8")
    assert "http://" not in text.replace("http://www.w3.org/2000/svg", "")
    assert "https://" not in text and "<script" not in text
    assert "Fieller" in text and "large enough to matter" in text
    assert "Rejected rows" in text and "12.00x" in text


def test_unknown_phase_column_names_the_columns() -> None:
    done = _check(str(LOG), "--phase-by", "batch")
    assert done.returncode == 2
    assert "no column 'batch'" in done.stderr and "lot" in done.stderr
