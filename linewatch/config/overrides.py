"""The chart options of `check` and `watch` as one typed record: values given on the command
line that win over the config's for every characteristic charted.

A ChartOverrides is checked when it is made, so one that exists is consistent: contradictory or
impossible values raise LinewatchError with a one-line reason naming the option.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from linewatch.config.choices import DISPERSIONS, DecimalMark, Dispersion
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

    def __post_init__(self) -> None:
        for option in ("center", "sigma", "lsl", "usl"):
            value = getattr(self, option)
            if value is not None and not -MAX_MAGNITUDE <= value <= MAX_MAGNITUDE:
                raise LinewatchError(f"--{option} {value:g} is out of range "
                                     f"(more than {MAX_MAGNITUDE:g} in magnitude)")
        if (self.center is None) != (self.sigma is None):
            raise LinewatchError("--center and --sigma go together")
        if self.sigma is not None and not self.sigma > 0:
            raise LinewatchError(f"--sigma must be more than 0 (σ ≤ 0 given: {self.sigma})")
        if self.lsl is not None and self.usl is not None and self.lsl >= self.usl:
            raise LinewatchError(f"--lsl must be below --usl ({self.lsl} >= {self.usl})")
        if self.subgroup_size is not None and not 1 <= self.subgroup_size <= 25:
            raise LinewatchError("--subgroup-size must be between 1 and 25")
        if self.baseline is not None and self.baseline < 2:
            raise LinewatchError("--baseline needs at least 2 plotted points")
        if self.dispersion is not None and self.dispersion not in DISPERSIONS:
            raise LinewatchError(f"--dispersion must be one of {', '.join(DISPERSIONS)}")
        if self.clear_after is not None and self.clear_after < 1:
            raise LinewatchError("--clear-after needs at least 1 quiet point")
        if self.rules:
            self.rule_ids()
        self._check_detector_options()

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

    def rule_ids(self) -> list[str] | None:
        """The rule ids `rules` names, or None when it names none (the config's stand)."""
        if not self.rules:
            return None
        from linewatch.engine.rulebook import parse_rule_list

        try:
            return parse_rule_list(self.rules)
        except RuleListError as exc:
            raise LinewatchError(f"--rules: {exc}") from None
