"""The letters that mark signalling points on the sparklines and charts, and what they mean.

One letter per kind of pattern (the same whatever the rule set, so n5 and we2 read alike), most
urgent first. The kinds are the rulebook's (`engine.rulebook`); `present.mark_points` turns a
point's rule ids into its letter where the picture is built, so the faces never read the
rulebook themselves.
"""

from __future__ import annotations

from collections.abc import Iterable

# kind of pattern (engine.rulebook) -> (letter, what it means), most urgent first
PATTERN_MARKS: dict[str, tuple[str, str]] = {
    "beyond": ("B", "beyond a control limit"),
    "k-of-m": ("Z", "several points far out in one zone"),
    "shift": ("D", "a small sustained shift (EWMA or CUSUM)"),
    "side-run": ("S", "a run on one side of the centre line"),
    "trend": ("T", "a run steadily up or down"),
    "mixture": ("M", "a run avoiding the centre, both sides"),
    "within": ("H", "a run hugging the centre line"),
    "alternate": ("A", "a run alternating up and down"),
}
UNKNOWN_MARK = "?"  # a rule the rulebook does not know (a newer store, a typo)
_URGENCY = list(PATTERN_MARKS)


def mark_of_kinds(kinds: Iterable[str | None]) -> str:
    """The letter of the most urgent kind among `kinds` (None: an unknown rule); '' for none,
    '?' when no kind is known."""
    kinds = list(kinds)
    if not kinds:
        return ""
    known = [k for k in kinds if k in PATTERN_MARKS]
    if not known:
        return UNKNOWN_MARK
    return PATTERN_MARKS[min(known, key=_URGENCY.index)][0]
