"""A chart whose limits step keeps one entry of limits per change (drawn from that point on:
steps) and separates only real phases; the newest proportion and its limit reach the board.
Limits here are p̄ ± 3√(p̄(1 − p̄)/n) (Montgomery, p chart), worked by hand for p̄ = 0.04."""

from __future__ import annotations

from math import sqrt

from linewatch.faces.tui.widgets.control_chart import phases_of, separators_of
from linewatch.present.stepped_view import stepped_chart
from linewatch.store.stepped_points import StoredSteppedPoint


def rec(i: int, d: int, n: int, phase: int = 0) -> StoredSteppedPoint:
    p = 0.04
    s = sqrt(p * (1 - p) / n)
    return StoredSteppedPoint("t", "p", i, d / n, n, p, p + 3 * s, max(0.0, p - 3 * s), s, phase,
                         i + 1, "f", None)


def test_limits_step_where_the_size_changes_and_only_phases_separate():
    recs = [rec(0, 2, 50), rec(1, 1, 50), rec(2, 3, 40), rec(3, 2, 40), rec(4, 9, 50, 1)]
    cv = stepped_chart(recs, "p", {4: ["we1"]}, phase_starts=[4])
    assert [start for start, *_ in cv.phase_limits] == [0, 2, 4]
    assert cv.phase_limits[1][2] == 0.04 + 3 * sqrt(0.04 * 0.96 / 40)
    assert cv.sizes == [50, 50, 40, 40, 50]
    assert cv.marks[-1] != "" and cv.marks[0] == ""
    assert separators_of(cv, phases_of(cv)) == [4]


def test_points_of_a_forming_baseline_have_no_limits_yet():
    recs = [StoredSteppedPoint("t", "p", 0, 0.05, 40, None, None, None, None, 0, 1, "f", None)]
    cv = stepped_chart(recs, "p", {}, [])
    assert cv.phase_limits == [] and cv.ucl is None and cv.values == [0.05]
