"""How one characteristic is charted, and the firing record both paths report.

The batch path (`engine.batch`) and the live engine (`engine.live`) take the same `ChartSetup`
and report the same `Firing`s, so one setup gives one verdict whichever path judged the values.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TypeVar

import numpy as np

from linewatch.engine.charts import chart_names
from linewatch.engine.limits import ChartLimits
from linewatch.engine.rulebook import BEYOND, DetectorSpec, RuleSpec
from linewatch.engine.stream import ChartLimitsState

Number = TypeVar("Number", float, np.ndarray)


@dataclass(frozen=True, slots=True)
class ChartSetup:
    """How one characteristic is charted."""

    name: str
    subgroup_size: int = 1
    dispersion: str = "range"
    rules: tuple[RuleSpec, ...] = ()
    baseline: int | None = None  # plotted points; None: all points (batch only)
    center: float | None = None
    sigma: float | None = None
    detectors: tuple[DetectorSpec, ...] = ()  # on the location statistic; each its own chart
    # how rows form subgroups: "count" (`subgroup_size` consecutive data rows), "label" (rows
    # with one sample id), "window" (rows in one clock window of `window` seconds)
    subgroups: str = "count"
    window: float | None = None
    timeout: float | None = None  # a live subgroup by label closes this long after its last row
    attribute_chart: str | None = None  # p, np, c, u, laney-p, laney-u; None: measured values

    @property
    def charts(self) -> tuple[str, str]:
        return chart_names(self.subgroup_size, self.dispersion)

    @property
    def dispersion_rules(self) -> tuple[RuleSpec, ...]:
        """Dispersion charts get only the beyond-limits test of the selected sets."""
        return tuple(r for r in self.rules if r.kind == BEYOND)


@dataclass(frozen=True, slots=True)
class Firing:
    """A rule fired at a plotted point (row position is into the values fed so far)."""

    chart: str
    rule: str
    index: int
    row: int
    value: float
    meta: object = None  # what the caller attached to the row (live path: file, line, time)
    side: str | None = None  # detectors: "up" or "down" (chart and rule are the detector's id)


def detector_value(spec: DetectorSpec, lim: ChartLimits, statistic: Number) -> Number:
    """A detector's statistic in the characteristic's units, as its chart plots it: the EWMA as
    centre + z·σ, a CUSUM side as C·σ (σ of the plotted location statistic)."""
    if spec.kind == "ewma":
        return lim.center + statistic * lim.sigma
    return statistic * lim.sigma


def limit_state(lim: ChartLimits) -> ChartLimitsState:
    """The limits as the rule evaluators take them (explicit UCL/LCL only when asymmetric)."""
    if lim.asymmetric:
        return ChartLimitsState(lim.center, lim.sigma, lim.ucl, lim.lcl)
    return ChartLimitsState(lim.center, lim.sigma)
