"""Glyph sets: one for terminals with good Unicode fonts, one plain-ASCII set for the Linux console.

The VGA text console lacks most block and geometric characters, so every glyph the screen draws
comes from here and has an ASCII twin. `pick_glyphs` chooses the set from the environment.
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from linewatch.present import view


@dataclass(frozen=True, slots=True)
class Glyphs:
    """Every character the screen draws that is not plain text."""

    ascii: bool
    state: dict[str, str]
    spark_bars: str
    point: str
    cursor: str
    hline: str
    center: str
    zone: str
    spec: str
    phase: str
    sigma: str  # one or two cells
    box_edge: str
    box_fill: str
    whisker: str
    median: str
    outlier: str
    band: str
    track: str
    mean: str


UNICODE = Glyphs(
    ascii=False,
    state={
        view.STATE_ALARM: "▲",
        view.STATE_WATCH: "♦",
        view.STATE_STALE: "○",
        view.STATE_REFUSED: "✕",
        view.STATE_LEARNING: "~",
        view.STATE_OK: "√",
    },
    spark_bars="▁▂▃▄▅▆▇█",
    point="•",
    cursor="▼",
    hline="─",
    center="─",
    zone="·",
    spec="═",
    phase="│",
    sigma="σ",
    box_edge="│",
    box_fill="█",
    whisker="─",
    median="┃",
    outlier="o",
    band="=",
    track="·",
    mean="■",
)

ASCII = Glyphs(
    ascii=True,
    state={
        view.STATE_ALARM: "!",
        view.STATE_WATCH: "*",
        view.STATE_STALE: "o",
        view.STATE_REFUSED: "x",
        view.STATE_LEARNING: "~",
        view.STATE_OK: "+",
    },
    spark_bars="_.-~=+*#",
    point="o",
    cursor="v",
    hline="-",
    center="-",
    zone=".",
    spec="=",
    phase="|",
    sigma="sd",  # not "s": beside the age column that reads as seconds
    box_edge="|",
    box_fill="#",
    whisker="-",
    median="M",
    outlier="o",
    band="=",
    track=".",
    mean="#",
)


def pick_glyphs(ascii_only: bool | None = None) -> Glyphs:
    """ASCII when asked, when LINEWATCH_ASCII is set, or on the Linux text console (TERM=linux)."""
    if ascii_only is None:
        ascii_only = bool(os.environ.get("LINEWATCH_ASCII")) or os.environ.get("TERM") == "linux"
    return ASCII if ascii_only else UNICODE
