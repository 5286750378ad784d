"""Every kind of pattern the rulebook knows has its own mark, and a chart's marks follow the
rules that fired at each point."""

from __future__ import annotations

from linewatch.engine.rulebook import RULES
from linewatch.present import view
from linewatch.present.mark_points import SHIFT, mark_chart, point_mark
from linewatch.present.marks import PATTERN_MARKS


def test_each_kind_of_the_rulebook_has_one_letter_of_its_own() -> None:
    kinds = {spec.kind for spec in RULES.values()} | {SHIFT}  # SHIFT: both detectors
    assert kinds == set(PATTERN_MARKS)
    letters = [letter for letter, _ in PATTERN_MARKS.values()]
    assert len(set(letters)) == len(letters)


def test_the_detectors_mark_a_small_shift_with_their_own_letter() -> None:
    # a point where the CUSUM fired together with we3 shows the more urgent zone pattern
    assert point_mark("cusum") == point_mark("ewma") == PATTERN_MARKS[SHIFT][0]
    assert point_mark("cusum,we3") == "Z"
    assert point_mark("we4,ewma") == PATTERN_MARKS[SHIFT][0]


def test_a_chart_is_marked_point_by_point_with_a_legend_of_its_rules() -> None:
    chart = mark_chart(view.ChartView("individuals", [0.0, 4.0, 2.5, 0.0],
                                      [0, 1, 2, 3], ["", "we1", "we2,n9", ""]))
    # we1 is beyond the limits (Western Electric 1956); n9 is no published rule: unknown
    assert chart.marks == ["", "B", "Z", ""]
    assert chart.legend["we1"][0] == "B" and chart.legend["we2"][0] == "Z"
    assert chart.legend["n9"] == ("?", "")
    assert "2 of 3" in chart.legend["we2"][1]
