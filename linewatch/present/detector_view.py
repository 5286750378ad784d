"""A detector's chart as the close-up draws it (standard library only: the faces import it).

EWMA: its statistic in the characteristic's units against its centre and its exact limits,
which widen from the start of a phase. CUSUM: C⁺ above the zero line and C⁻ below it (drawn as
−C⁻), both against the decision interval h·σ, drawn at +h and −h."""

from __future__ import annotations

from dataclasses import dataclass, field

EWMA_CHART = "ewma"
CUSUM_CHART = "cusum"


@dataclass(slots=True)
class DetectorChartView:
    """One detector's chart over the close-up's points (aligned lists)."""

    detector: str  # EWMA_CHART or CUSUM_CHART
    title: str  # e.g. "EWMA λ 0.2, L 2.962"
    indices: list[int] = field(default_factory=list)  # plotted indices (the location chart's)
    upper: list[float] = field(default_factory=list)  # EWMA statistic; CUSUM C⁺ (units)
    lower: list[float] = field(default_factory=list)  # CUSUM C⁻ (units, ≥ 0; drawn below 0)
    center: list[float] = field(default_factory=list)  # EWMA centre; CUSUM 0
    ucl: list[float] = field(default_factory=list)  # EWMA upper limit; CUSUM h·σ
    lcl: list[float] = field(default_factory=list)  # EWMA lower limit; CUSUM h·σ (for C⁻)
    # the mark of a point where the detector fired, on the side it fired ("" none)
    upper_marks: list[str] = field(default_factory=list)
    lower_marks: list[str] = field(default_factory=list)
    phase_starts: list[int] = field(default_factory=list)
