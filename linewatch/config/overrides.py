"""The chart options of `check` and `watch` as one typed record: values given on the command
line that win over the config's for every characteristic charted.

A ChartOverrides is checked when it is made, so one that exists is consistent: contradictory or
impossible values raise LinewatchError with a one-line reason naming the option.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from linewatch.config.choices import (
    ATTRIBUTE_CHART_NAMES,
    DISPERSIONS,
    AttributeChart,
    DecimalMark,
    Dispersion,
)
from linewatch.domain.durations import parse_duration
from linewatch.domain.errors import LinewatchError, RuleListError
from linewatch.domain.records import MAX_MAGNITUDE

# (detector, its config option, the ChartOverrides field and so the option --ewma-lambda ...)
DETECTOR_FIELDS = (
    ("ewma", "lambda", "ewma_lambda"),
    ("ewma", "width", "ewma_width"),
    ("cusum", "k", "cusum_k"),
    ("cusum", "h", "cusum_h"),
    ("cusum", "headstart", "cusum_headstart"),
)


MAX_PARTS = 100_000  # parts in a subgroup of pass/fail results (measured values: 25)


@dataclass(frozen=True, slots=True, kw_only=True)
class ChartOverrides:
    """What to chart and how; None (or empty) leaves the config's value."""

    columns: tuple[str, ...] = ()  # characteristics (names or columns) to chart
    rules: str | None = None  # rule ids and set names, comma-separated
    center: float | None = None  # known process centre (with sigma)
    sigma: float | None = None  # known standard deviation of individual values
    baseline: int | None = None  # plotted points the Phase I limits are estimated from
    subgroup_size: int | None = None
    dispersion: Dispersion | None = None
    lsl: float | None = None
    usl: float | None = None
    decimal: DecimalMark | None = None  # of the logs named on the command line
    clear_after: int | None = None  # quiet plotted points that end an alarm episode
    ewma_lambda: float | None = None  # EWMA smoothing weight λ
    ewma_width: float | None = None  # EWMA limit width L
    cusum_k: float | None = None  # CUSUM reference value (σ of the plotted statistic)
    cusum_h: float | None = None  # CUSUM decision interval
    cusum_headstart: float | None = None  # CUSUM head start (fast initial response)
    subgroup_by: str | None = None  # column whose value names a row's subgroup (sample id)
    subgroup_window: str | None = None  # a duration: rows in one clock window form a subgroup
    attribute_chart: AttributeChart | None = None  # --chart
    count_column: str | None = None  # --count: nonconforming units or defects per row
    size_column: str | None = None  # --size: units inspected per row
    result_column: str | None = None  # --result: one part's pass/fail result per row
    fail_values: str | None = None  # --fail: comma-separated values that mean a failed part
    pass_values: str | None = None  # --pass: ... a good part

    def __post_init__(self) -> None:
        for option in ("center", "sigma", "lsl", "usl"):
            value = getattr(self, option)
            if value is not None and not -MAX_MAGNITUDE <= value <= MAX_MAGNITUDE:
                raise LinewatchError(f"--{option} {value:g} is out of range "
                                     f"(more than {MAX_MAGNITUDE:g} in magnitude)")
        attribute = self.count_column or self.result_column or self.attribute_chart
        if (self.center is None) != (self.sigma is None) and not (attribute and
                                                                  self.sigma is None):
            raise LinewatchError("--center and --sigma go together (an attribute chart, named "
                                 "with --count, --result or --chart, takes --center alone)")
        if self.sigma is not None and not self.sigma > 0:
            raise LinewatchError(f"--sigma must be more than 0 (σ ≤ 0 given: {self.sigma})")
        if self.lsl is not None and self.usl is not None and self.lsl >= self.usl:
            raise LinewatchError(f"--lsl must be below --usl ({self.lsl} >= {self.usl})")
        if self.subgroup_size is not None and not 1 <= self.subgroup_size <= MAX_PARTS:
            raise LinewatchError(f"--subgroup-size must be between 1 and 25 (measured values) "
                                 f"or {MAX_PARTS} (pass/fail results)")
        if self.baseline is not None and self.baseline < 2:
            raise LinewatchError("--baseline needs at least 2 plotted points")
        if self.dispersion is not None and self.dispersion not in DISPERSIONS:
            raise LinewatchError(f"--dispersion must be one of {', '.join(DISPERSIONS)}")
        if self.clear_after is not None and self.clear_after < 1:
            raise LinewatchError("--clear-after needs at least 1 quiet point")
        if self.rules:
            self.rule_ids()
        self._check_detector_options()
        self._check_subgroups_and_attributes()

    def detector_options(self) -> dict[str, dict[str, float]]:
        """The detector parameters given, as the config's tables hold them
        ({"ewma": {"lambda": 0.1}, "cusum": {"h": 4.0}}); absent ones are left out."""
        out: dict[str, dict[str, float]] = {}
        for detector, option, field in DETECTOR_FIELDS:
            value = getattr(self, field)
            if value is not None:
                out.setdefault(detector, {})[option] = value
        return out

    def _check_detector_options(self) -> None:
        from linewatch.engine.rulebook import DETECTOR_OPTIONS

        for detector, option, field in DETECTOR_FIELDS:
            value = getattr(self, field)
            if value is None:
                continue
            _spec_field, lo, hi = DETECTOR_OPTIONS[detector][option]
            flag = "--" + field.replace("_", "-")
            if not (math.isfinite(value) and lo <= value <= hi):
                raise LinewatchError(f"{flag} must be between {lo:g} and {hi:g}, got {value:g}")
        if (self.cusum_h is not None and self.cusum_headstart is not None
                and self.cusum_headstart >= self.cusum_h):
            raise LinewatchError("--cusum-headstart must be below --cusum-h "
                                 "(h/2 is the usual choice)")

    def _check_subgroups_and_attributes(self) -> None:
        ways = [(o, v) for o, v in (("--subgroup-size", self.subgroup_size),
                                    ("--subgroup-by", self.subgroup_by),
                                    ("--subgroup-window", self.subgroup_window)) if v is not None]
        if len(ways) > 1:
            raise LinewatchError(f"{ways[0][0]} and {ways[1][0]} exclude each other: give one "
                                 "way of forming subgroups")
        for option, value in (("--subgroup-by", self.subgroup_by), ("--count", self.count_column),
                              ("--size", self.size_column), ("--result", self.result_column)):
            if value is not None and not value.strip():
                raise LinewatchError(f"{option} needs a column name")
        if self.subgroup_window is not None:
            self.window_seconds()
        if self.attribute_chart is not None and self.attribute_chart not in \
                ATTRIBUTE_CHART_NAMES:
            raise LinewatchError(f"--chart must be one of {', '.join(ATTRIBUTE_CHART_NAMES)}")
        if self.count_column is not None and self.result_column is not None:
            raise LinewatchError("--count and --result exclude each other: a row holds counts "
                                 "or one part's result")
        if self.size_column is not None and self.count_column is None:
            raise LinewatchError("--size goes with --count (the units the counts were found in)")
        for option, values in (("--fail", self.fail_values), ("--pass", self.pass_values)):
            if values is not None and not split_values(values):
                raise LinewatchError(f"{option} needs at least one value, e.g. {option} FAIL,NG")

    def window_seconds(self) -> float | None:
        """`subgroup_window` in seconds (None when not given)."""
        if self.subgroup_window is None:
            return None
        try:
            return parse_window(self.subgroup_window)
        except ValueError as exc:
            raise LinewatchError(f"--subgroup-window: {exc}") from None

    def rule_ids(self) -> list[str] | None:
        """The rule ids `rules` names, or None when it names none (the config's stand)."""
        if not self.rules:
            return None
        from linewatch.engine.rulebook import parse_rule_list

        try:
            return parse_rule_list(self.rules)
        except RuleListError as exc:
            raise LinewatchError(f"--rules: {exc}") from None


def split_values(text: str) -> list[str]:
    """The values of a comma-separated option (`--fail FAIL,NG`), blanks trimmed, empties out."""
    return [v.strip() for v in text.split(",") if v.strip()]


def parse_window(text: str | int | float) -> float:
    """Seconds of a clock window (`15m`, `1h`, with its unit, 1s to 1d); ValueError saying why
    the text is none."""
    seconds = parse_duration(text, need_unit=True)
    if not 1.0 <= seconds <= 86400.0:
        raise ValueError(f"a subgroup window must be from 1s to 1d, got {text!r}")
    return seconds
