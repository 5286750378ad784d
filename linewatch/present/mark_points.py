"""Mark the points of a chart from the rulebook: each point's letter and a legend of the rules
that fired, so the faces draw marks without knowing any rule. Run where the picture is built
(a worker thread or the collector), never on the screen's loop."""

from __future__ import annotations

from linewatch.engine.rulebook import DETECTORS, RULES
from linewatch.present.marks import mark_of_kinds
from linewatch.present.view import ChartView


def rule_ids(rules: str) -> list[str]:
    """The rule ids of one point's comma-separated list ('n2,n1' -> ['n2', 'n1'])."""
    return [r for r in (part.strip() for part in rules.split(",")) if r]


def point_mark(rules: str) -> str:
    """The letter marking a point whose rules fired ('we2' -> 'Z', 'n2,n1' -> 'B'); '?' for a
    rule id not in the rulebook, '' for none."""
    return mark_of_kinds(_kind(r) for r in rule_ids(rules))


def _kind(rule: str) -> str | None:
    """The pattern kind of a rule id; both detectors mark a small sustained shift."""
    if rule in RULES:
        return RULES[rule].kind
    return SHIFT if rule in DETECTORS else None


SHIFT = "shift"  # the detectors' kind of pattern (present.marks)


def point_marks(rules: list[str]) -> list[str]:
    """`point_mark` of every point."""
    return [point_mark(r) if r else "" for r in rules]


def rule_words(rule: str) -> str:
    """A rule in plain words, with its published parameters ('' for an unknown id)."""
    spec = RULES.get(rule) or DETECTORS.get(rule)
    return spec.describe() if spec else ""


def mark_chart(chart: ChartView) -> ChartView:
    """Fill `chart.marks` and `chart.legend` from `chart.rules`; returns the chart."""
    chart.marks = point_marks(chart.rules)
    fired = sorted({r for rules in chart.rules for r in rule_ids(rules)})
    chart.legend = {r: (point_mark(r), rule_words(r)) for r in fired}
    return chart
