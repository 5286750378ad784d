"""The small-shift sample (sample_feeds/wall_cooling.csv): one wall gauge with a sustained 1σ
shift at point 400, charted with the CUSUM, the EWMA and the Western Electric rules.

What is checked against outside figures: CUSUM k = 0.5, h = 5 finds a 1σ shift in 10.4 points
on average and raises a false alarm every 465 (Montgomery's CUSUM table, from memory); EWMA
λ = 0.2, L = 2.962 in about 10 and 500 (Lucas & Saccucci 1990, from memory); the Western
Electric rules 1–4 in 9.2 and 92 (exact Markov chain; published table, from memory). The sample
is one run of invented data, so the test asks what the table predicts of it in the large: the
detectors find the shift within a few of their average run lengths and stay quiet before it,
the Western Electric rules find it no sooner than a few of their run lengths either and raise
false alarms before it (about 400/92 ≈ 4 expected)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[3]
SHIFT_AT = 400


def _records() -> list[dict]:
    done = subprocess.run(
        [sys.executable, "-m", "linewatch", "check", "sample_feeds/wall_cooling.csv", "-c",
         "config/wall_cooling.toml", "--format", "jsonl"],
        cwd=ROOT, capture_output=True, text=True, timeout=60)
    assert done.returncode == 1, done.stderr
    return [json.loads(line) for line in done.stdout.splitlines()]


def _signal_points(records: list[dict], name: str) -> list[int]:
    return sorted({r["index"] for r in records if r["type"] == "signal"
                   and r["characteristic"] == name and r["chart"] != "moving-range"})


def test_the_detectors_find_the_shift_sooner_or_cleaner_than_western_electric_as_predicted():
    records = _records()
    summary = {r["characteristic"]: r for r in records if r["type"] == "summary"}
    delay, false_alarms = {}, {}
    for name in ("wall-cusum", "wall-ewma", "wall-we"):
        points = _signal_points(records, name)
        false_alarms[name] = len([i for i in points if i < SHIFT_AT])
        delay[name] = next(i for i in points if i >= SHIFT_AT) - SHIFT_AT + 1
    predicted = {n: summary[n]["arl_by_shift"] for n in summary}
    assert 10.0 <= predicted["wall-cusum"]["1"] <= 10.8  # Montgomery 10.4
    assert 9.0 <= predicted["wall-ewma"]["1"] <= 10.5  # Lucas & Saccucci about 10
    assert round(predicted["wall-we"]["1"], 1) == 9.2  # published / exact chain
    for name in ("wall-cusum", "wall-ewma"):
        assert delay[name] <= 3 * predicted[name]["1"]  # found within its run lengths
        assert false_alarms[name] == 0  # ARL₀ 465–500 against 400 points in control
    # Western Electric: as fast on average, but with false alarms before the shift
    assert false_alarms["wall-we"] >= 2
    assert predicted["wall-we"]["0"] < predicted["wall-cusum"]["0"] / 4
    assert (delay["wall-we"] > max(delay["wall-cusum"], delay["wall-ewma"])
            or false_alarms["wall-we"] > 0)
