"""The shift report's EWMA and CUSUM charts: the detectors' statistics over the period's
location points, against each phase's limits, as traces `svg_charts` draws. The statistics
restart at the period's first point (and at each new phase); the flagged points are where the
detector fired, from the stored signals."""

from __future__ import annotations

from itertools import pairwise
from typing import TYPE_CHECKING

import numpy as np

from linewatch.domain.records import Limits
from linewatch.engine.detectors.cusum import CusumTrace
from linewatch.engine.detectors.detect import run, standardise
from linewatch.engine.rulebook import CusumSpec, EwmaSpec

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig
    from linewatch.report.build import ChartTrace


def detector_traces(cfg: CharacteristicConfig | None, location: ChartTrace,
                    history: list[Limits], fired: dict[int, list[str]]) -> list[ChartTrace]:
    """One trace for the EWMA, two for the CUSUM (C⁺ above 0, C⁻ drawn below it)."""
    from linewatch.present.detector_charts import detectors_of
    from linewatch.report.build import ChartTrace, _limits_at

    if cfg is None or not location.values:
        return []
    detectors = detectors_of(cfg)
    if not detectors:
        return []
    limits = [_limits_at(history, i) for i in location.indices]
    x = np.array(location.values, dtype=float)
    # segments of one phase each (a new phase restarts the statistics)
    phase = [lim.phase if lim else -1 for lim in limits]
    cuts = [0] + [k for k in range(1, len(phase)) if phase[k] != phase[k - 1]] + [len(phase)]
    out: list[ChartTrace] = []
    for det in detectors:
        if isinstance(det, EwmaSpec):
            made = [ChartTrace(f"EWMA (λ {det.lam:g}, L {det.width:g})")]
        else:
            made = [ChartTrace(f"CUSUM C⁺ (k {det.k:g}, h {det.h:g})"),
                    ChartTrace(f"CUSUM C⁻ (k {det.k:g}, h {det.h:g}), drawn below 0")]
        for a, b in pairwise(cuts):
            lim = limits[a]
            if lim is None or not lim.sigma:
                continue
            trace, _ = run(det, standardise(x[a:b], lim.center, lim.sigma))
            idx = location.indices[a:b]
            for t in made:
                t.indices += idx
            if isinstance(trace, CusumTrace):
                assert isinstance(det, CusumSpec)
                h = det.h * lim.sigma
                up, down = made
                up.values += (trace.upper * lim.sigma).tolist()
                down.values += (-trace.lower * lim.sigma).tolist()
                for t, ucl, lcl in ((up, h, None), (down, None, -h)):
                    t.center += [0.0] * len(idx)
                    t.ucl += [ucl] * len(idx)
                    t.lcl += [lcl] * len(idx)
                up.flagged.update(i for i, c in zip(idx, trace.upper.tolist(), strict=True)
                                  if c > det.h and det.id in fired.get(i, []))
                down.flagged.update(i for i, c in zip(idx, trace.lower.tolist(), strict=True)
                                    if c > det.h and det.id in fired.get(i, []))
            else:
                (t,) = made
                t.values += (lim.center + trace.statistic * lim.sigma).tolist()
                t.center += [lim.center] * len(idx)
                t.ucl += (lim.center + trace.half_width * lim.sigma).tolist()
                t.lcl += (lim.center - trace.half_width * lim.sigma).tolist()
                t.flagged.update(i for i in idx if det.id in fired.get(i, []))
        out.extend(made)
    return out
