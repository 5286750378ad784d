"""`linewatch check` with subgroups that follow the data and with attribute data, run as a user
runs it (a real process on real files).

Expected figures are recomputed here with numpy from the published formulas (Montgomery,
Introduction to Statistical Quality Control: X̄ and s charts with variable sample size, and the
p, np, c and u charts; quoted from memory) and, for exact intervals, from scipy.stats. The
S chart's centre c4(n)·s̄ and the X̄ limits x̿ ± 3s̄/√n on the pooled s̄ are our convention
(DEVELOPERS.md, "Subgroups of varying size").
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import stats


def lw(*args: str) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], capture_output=True,
                          text=True, timeout=60)


def records(text: str) -> list[dict]:
    return [json.loads(line) for line in text.splitlines() if line.strip()]


def s002_log(path: Path, seed: int = 11) -> tuple[Path, list[list[float]]]:
    """40 samples of 5 diameters with a sample column; one reading of S002 unreadable; the
    mean moves up 1.5σ from sample S029 on (a real shift)."""
    rng = np.random.default_rng(seed)
    rows = ["time,sample,od_mm"]
    groups: list[list[float]] = []
    for s in range(40):
        mu = 12.0 + (0.015 if s >= 28 else 0.0)
        group = []
        for k in range(5):
            v = round(float(rng.normal(mu, 0.01)), 4)
            stamp = f"2026-03-02T{6 + s // 6:02d}:{(s % 6) * 10:02d}:{k * 2:02d}"
            if s == 1 and k == 2:
                rows.append(f"{stamp},S002,ERR")
                continue
            rows.append(f"{stamp},S{s + 1:03d},{v}")
            group.append(v)
        groups.append(group)
    path.write_text("\n".join(rows) + "\n")
    return path, groups


@pytest.mark.parametrize("how", [("--subgroup-by", "sample"), ("--subgroup-size", "5")])
def test_an_unreadable_reading_leaves_its_own_subgroup_short_and_shifts_nothing(tmp_path, how):
    log, groups = s002_log(tmp_path / "od.csv")
    got = lw("check", str(log), *how, "--baseline", "25", "--format", "jsonl", "--points")
    out = records(got.stdout)
    xbar = [r for r in out if r["type"] == "point" and r["chart"] == "xbar"]
    assert len(xbar) == 40
    assert [r["n"] for r in xbar] == [5, 4] + [5] * 38
    assert [r["value"] for r in xbar] == pytest.approx([float(np.mean(g)) for g in groups])
    (rejected,) = [r for r in out if r["type"] == "rejected"]
    assert rejected["line"] == 9 and "ERR" in rejected["reason"]
    signals = [r for r in out if r["type"] == "signal"]
    # no spurious signal: nothing on the dispersion chart, nothing before the real shift
    assert not [s for s in signals if s["chart"] != "xbar"]
    assert signals and min(s["index"] for s in signals) >= 28


def test_stepped_xbar_s_limits_follow_the_pooled_formulas(tmp_path):
    log, groups = s002_log(tmp_path / "od.csv")
    got = lw("check", str(log), "--subgroup-by", "sample", "--baseline", "25",
             "--format", "jsonl", "--points")
    out = records(got.stdout)
    base = groups[:25]
    n = np.array([len(g) for g in base])
    xbarbar = sum(len(g) * np.mean(g) for g in base) / n.sum()
    sbar = np.sqrt(sum((len(g) - 1) * np.var(g, ddof=1) for g in base) / (n.sum() - len(base)))
    limits = {r["chart"]: r for r in out if r["type"] == "limits"}
    assert limits["xbar"]["varies"] is True and limits["xbar"]["ucl"] is None
    assert limits["xbar"]["center"] == pytest.approx(xbarbar)
    points = [r for r in out if r["type"] == "point" and r["chart"] == "xbar"]
    for r in points[:3]:
        assert r["ucl"] == pytest.approx(xbarbar + 3 * sbar / np.sqrt(r["n"]))
        assert r["lcl"] == pytest.approx(xbarbar - 3 * sbar / np.sqrt(r["n"]))


def write_tester_log(path: Path, rows: list[tuple[str, str]]) -> Path:
    path.write_text("time,tube,result\n" + "".join(
        f"{t},T{i:05d},{r}\n" for i, (t, r) in enumerate(rows)))
    return path


def test_pass_fail_results_by_clock_window_chart_p_with_exact_capability(tmp_path):
    rng = np.random.default_rng(3)
    rows, fails, sizes = [], [], []
    for hour in range(12):
        size = int(rng.integers(40, 60))
        bad = rng.random(size) < 0.05
        for k in range(size):
            stamp = f"2026-03-02T{6 + hour:02d}:{k:02d}:00"
            rows.append((stamp, ["fail", "NG"][k % 2] if bad[k] else "PASS"))
        fails.append(int(bad.sum()))
        sizes.append(size)
    rows.insert(30, ("2026-03-02T06:29:30", "RETEST"))
    log = write_tester_log(tmp_path / "leak.csv", rows)
    got = lw("check", str(log), "--result", "result", "--subgroup-window", "1h",
             "--format", "jsonl", "--points")
    out = records(got.stdout)
    (rejected,) = [r for r in out if r["type"] == "rejected"]
    assert rejected["line"] == 32 and "neither a pass nor a fail" in rejected["reason"]
    points = [r for r in out if r["type"] == "point"]
    assert [r["n"] for r in points] == sizes
    pbar = sum(fails) / sum(sizes)  # Montgomery: p̄ = Σd_i / Σn_i
    for r, d, n in zip(points, fails, sizes, strict=True):
        assert r["value"] == pytest.approx(d / n)
        assert r["ucl"] == pytest.approx(pbar + 3 * np.sqrt(pbar * (1 - pbar) / n))
        assert r["lcl"] == pytest.approx(max(0.0, pbar - 3 * np.sqrt(pbar * (1 - pbar) / n)))
    (summary,) = [r for r in out if r["type"] == "summary"]
    d, n = sum(fails), sum(sizes)
    lo = stats.beta.ppf(0.025, d, n - d + 1)  # Clopper–Pearson, from scipy.stats
    hi = stats.beta.ppf(0.975, d + 1, n - d)
    assert summary["ci95"] == pytest.approx([lo, hi], rel=1e-6)
    assert summary["ppm"] == pytest.approx(1e6 * d / n)
    assert summary["cp"] is None and "do not apply" in summary["cp_note"]
    text = lw("check", str(log), "--result", "result", "--subgroup-window", "1h").stdout
    assert "Cp and Cpk do not apply" in text
    section = text.split("rejected rows:")[0]  # (the rejected list names the whole path)
    assert max(len(line) for line in section.splitlines()) <= 80


def counts_log(path: Path, defects, frames) -> Path:
    path.write_text("time,coil,defects,frames\n" + "".join(
        f"2026-03-02T06:{i:02d}:00,C1,{d},{n}\n" for i, (d, n) in
        enumerate(zip(defects, frames, strict=True))))
    return path


def test_np_with_varying_sizes_is_refused_with_the_p_chart_suggested(tmp_path):
    log = counts_log(tmp_path / "v.csv", [1, 2, 0, 3, 1], [100, 120, 100, 90, 100])
    got = lw("check", str(log), "--count", "defects", "--size", "frames", "--chart", "np")
    assert got.returncode == 2
    assert "use the p chart (--chart p)" in got.stderr


def test_counts_without_sizes_are_a_c_chart(tmp_path):
    defects = [3, 5, 2, 4, 6, 3, 4, 2, 5, 3]
    log = counts_log(tmp_path / "v.csv", defects, [1] * 10)
    out = records(lw("check", str(log), "--count", "defects", "--format", "jsonl").stdout)
    (lim,) = [r for r in out if r["type"] == "limits"]
    cbar = np.mean(defects)  # c̄ ± 3√c̄ (Montgomery)
    assert (lim["chart"], lim["varies"]) == ("c", False)
    assert lim["ucl"] == pytest.approx(cbar + 3 * np.sqrt(cbar))
    assert lim["lcl"] == pytest.approx(max(0.0, cbar - 3 * np.sqrt(cbar)))


def test_overdispersed_large_subgroups_get_the_laney_chart_suggested(tmp_path):
    rng = np.random.default_rng(8)
    frames = rng.integers(4000, 6000, 30)
    rate = 0.01 * np.exp(rng.normal(0, 0.3, 30))  # the rate itself varies between rows
    defects = rng.poisson(rate * frames)
    log = counts_log(tmp_path / "v.csv", defects.tolist(), frames.tolist())
    text = lw("check", str(log), "--count", "defects", "--size", "frames", "--chart", "u").stdout
    assert "vary more than the Poisson model" in text and "--chart laney-u" in text
    laney = lw("check", str(log), "--count", "defects", "--size", "frames",
               "--chart", "laney-u", "--format", "jsonl")
    (summary,) = [r for r in records(laney.stdout) if r["type"] == "summary"]
    assert summary["sigma_z"] > 1.2 and summary["beyond_limits_per_1000"] is None


def test_a_known_proportion_is_given_with_center_alone(tmp_path):
    rows = [(f"2026-03-02T{6 + k // 50:02d}:{k % 50:02d}:00", "FAIL" if k % 25 == 0 else "PASS")
            for k in range(200)]
    log = write_tester_log(tmp_path / "leak.csv", rows)
    got = lw("check", str(log), "--result", "result", "--subgroup-window", "1h",
             "--center", "0.1", "--format", "jsonl", "--points")
    assert got.returncode in (0, 1), got.stderr
    points = [r for r in records(got.stdout) if r["type"] == "point"]
    assert [r["n"] for r in points] == [50] * 4
    for r in points:  # p ± 3√(p(1 − p)/n) around the known p (Montgomery, standard given)
        assert r["center"] == 0.1
        assert r["ucl"] == pytest.approx(0.1 + 3 * np.sqrt(0.1 * 0.9 / 50))
    refused = lw("check", str(log), "--center", "0.1")
    assert refused.returncode == 2 and "--center and --sigma go together" in refused.stderr


def test_p_chart_limits_of_a_published_worked_example(tmp_path):
    # Montgomery's frozen-juice cans (p chart example, quoted from memory): 30 samples of 50
    # cans, 347 nonconforming in all, p̄ = 0.2313, UCL = 0.4102, LCL = 0.0524. The limits
    # depend only on p̄ and n, so any 30 counts with that total reproduce them.
    counts = [12] * 17 + [11] * 13
    rows = []
    for s, d in enumerate(counts):
        rows += [(f"2026-03-02T06:{s:02d}:{k:02d}", "FAIL" if k < d else "PASS")
                 for k in range(50)]
    log = write_tester_log(tmp_path / "cans.csv", rows)
    out = records(lw("check", str(log), "--result", "result", "--subgroup-size", "50",
                     "--format", "jsonl").stdout)
    (lim,) = [r for r in out if r["type"] == "limits"]
    assert sum(counts) == 347 and lim["varies"] is False
    assert (round(lim["center"], 4), round(lim["ucl"], 4), round(lim["lcl"], 4)) == (
        0.2313, 0.4102, 0.0524)


def test_u_chart_limits_of_a_published_worked_example(tmp_path):
    # Montgomery's personal computers (u chart example, quoted from memory): 20 samples of 5
    # units, ū = 1.93, UCL = 3.79, LCL = 0.07 (193 defects in 100 units).
    defects = [10] * 13 + [9] * 7
    log = counts_log(tmp_path / "pc.csv", defects, [5] * 20)
    out = records(lw("check", str(log), "--count", "defects", "--size", "frames", "--chart",
                     "u", "--format", "jsonl").stdout)
    (lim,) = [r for r in out if r["type"] == "limits"]
    assert sum(defects) == 193
    assert (round(lim["center"], 2), round(lim["ucl"], 2), round(lim["lcl"], 2)) == (
        1.93, 3.79, 0.07)
