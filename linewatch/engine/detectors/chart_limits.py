"""The limits a detector's chart draws, in the characteristic's units, from the location
chart's limits: EWMA centre ± L·σ·√(λ/(2 − λ)) (asymptotic; the exact limits are narrower at
the start of a phase), CUSUM decision interval h·σ above 0 for both sides (no lower limit)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from linewatch.engine.limits import ChartLimits
from linewatch.engine.rulebook import CusumSpec, DetectorSpec, EwmaSpec


@dataclass(frozen=True, slots=True)
class DetectorLimits:
    """One detector chart's limits (`lcl` NaN where there is none: the CUSUM)."""

    chart: str
    center: float
    ucl: float
    lcl: float
    sigma: float  # σ of the location chart's plotted statistic
    varies: bool  # EWMA: the limits widen from the start of a phase to these
    parameters: dict[str, float]


def detector_limits(spec: DetectorSpec, location: ChartLimits) -> DetectorLimits:
    """The chart limits of `spec` over a location chart with `location` limits."""
    sigma = location.sigma
    if isinstance(spec, EwmaSpec):
        half = spec.asymptotic_half_width * sigma
        return DetectorLimits(spec.id, location.center, location.center + half,
                              location.center - half, sigma, True,
                              {"lambda": spec.lam, "width": spec.width})
    assert isinstance(spec, CusumSpec)
    return DetectorLimits(spec.id, 0.0, spec.h * sigma, math.nan, sigma, False,
                          {"k": spec.k, "h": spec.h, "headstart": spec.headstart})

