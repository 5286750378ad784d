"""Rich styles for the drawings (charts, gauges, sparklines). Widget colours live in linewatch.tcss.

Colour only ever repeats what a glyph or a word already says, so NO_COLOR and monochrome
terminals lose nothing.
"""

from __future__ import annotations

from linewatch.present import view

STATE_STYLE = {
    view.STATE_ALARM: "bold white on dark_red",
    view.STATE_WATCH: "bold yellow",
    view.STATE_STALE: "magenta",
    view.STATE_REFUSED: "bold magenta",
    view.STATE_LEARNING: "cyan",
    view.STATE_OK: "green",
}

SIGNAL = "bold red"
POINT = "bright_white"
LINK = "grey50"
LIMIT = "red"
CENTER = "green"
ZONE = "grey42"
SPEC = "bold magenta"
PHASE = "yellow"
CURSOR = "reverse"
LABEL = "grey70"
BOX = "cyan"  # the box plot's quartile box, its edges and the median
BOX_EDGE = "bold cyan"
MEDIAN = "bold white"
SPARK_LOW = "#3a7ca5"
SPARK_HIGH = "#9fd8ff"

# Capability colours against 1.00 and 1.33: common-practice thresholds (1.33 is the usual minimum
# for an established process, below 1.00 the process spreads past a spec limit).
CPK_POOR = "bold red"
CPK_MARGINAL = "yellow"
CPK_GOOD = "green"
CPK_THRESHOLDS = (1.00, 1.33)


def cpk_style(cpk: float | None) -> str:
    """Colour of a Cpk value against the common-practice thresholds 1.00 and 1.33."""
    if cpk is None:
        return LABEL
    if cpk < CPK_THRESHOLDS[0]:
        return CPK_POOR
    if cpk < CPK_THRESHOLDS[1]:
        return CPK_MARGINAL
    return CPK_GOOD


def cpk_word(cpk: float | None) -> str:
    """The same judgement as a word, for monochrome screens."""
    if cpk is None:
        return ""
    if cpk < CPK_THRESHOLDS[0]:
        return "poor"
    if cpk < CPK_THRESHOLDS[1]:
        return "thin"
    return "good"
