"""Build the close-up's detector charts (EWMA, CUSUM) and its detection-power table.

The statistics are recomputed from the stored readings with the engine's own detectors, phase
by phase against each phase's location limits (a new phase starts them afresh, as in the
engine). Only the newest readings are read: `WARM_UP` plotted points before the close-up's
window let a statistic settle when its phase began earlier (an EWMA forgets older points by
(1 − λ) a point; a CUSUM side agrees with the engine's from the first point where the
engine's was 0). Where the detector fired comes from the stored signals, not from this
recomputation, so the marks are exact."""

from __future__ import annotations

from bisect import bisect_right
from typing import TYPE_CHECKING

import numpy as np

from linewatch.engine.charts import chart_names
from linewatch.engine.detectors.cusum import CusumTrace
from linewatch.engine.detectors.detect import run, standardise
from linewatch.engine.rulebook import (
    CUSUM,
    EWMA,
    CusumSpec,
    DetectorSpec,
    EwmaSpec,
    resolve_detectors,
)
from linewatch.present.detector_view import DetectorChartView
from linewatch.present.mark_points import point_mark
from linewatch.present.view import CharacteristicView

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig
    from linewatch.store.db import Store

WARM_UP = 2000  # plotted points read before the window so the statistics can settle


def detectors_of(c: CharacteristicConfig) -> list[DetectorSpec]:
    """The characteristic's detectors with its parameters ([] when the rules name none)."""
    return resolve_detectors(c.rules, {EWMA: c.ewma, CUSUM: c.cusum})


def add_detector_charts(store: Store, c: CharacteristicConfig, v: CharacteristicView,
                        readings: int) -> None:
    """Fill `v.detectors` (one chart per detector over the location chart's shown points) and
    `v.power` (the rule set's detection power) for the close-up."""
    from linewatch.config.selection import chart_setup
    from linewatch.domain.errors import LinewatchError
    from linewatch.present.power_table import power_table, rule_set_name

    try:
        setup = chart_setup(c, None)
    except LinewatchError:  # a chart the engine refuses has no power to show either
        return
    v.power = power_table(rule_set_name(setup), setup.rules, setup.detectors,
                          setup.subgroup_size)
    detectors = list(setup.detectors)
    loc = v.location
    if not detectors or loc is None or not loc.indices or not loc.phase_limits:
        return
    n = max(1, c.subgroup_size)
    recs = store.history.last_points(c.name, readings + WARM_UP * n)
    if not recs:
        return
    from linewatch.present.snapshot import _plotted

    values = np.array([r.value for r in recs])
    lv, li, _dv, _di = _plotted(values, recs[0].index, n, c.effective_dispersion)
    loc_name = chart_names(n, c.effective_dispersion)[0]
    fired = store.alarms.signals_over(c.name, int(loc.indices[0])).get(loc_name, {})
    shown_from = int(loc.indices[0])
    for det in detectors:
        v.detectors.append(_chart(det, lv, li, loc.phase_limits, fired, shown_from))


def _chart(det: DetectorSpec, values: np.ndarray, indices: np.ndarray,
           phases: list[tuple[int, float, float, float, float]],
           fired: dict[int, list[str]], shown_from: int) -> DetectorChartView:
    if isinstance(det, EwmaSpec):
        title = f"EWMA λ {det.lam:g}, L {det.width:g}"
    else:
        assert isinstance(det, CusumSpec)
        head = f", head start {det.headstart:g}" if det.headstart else ""
        title = f"CUSUM k {det.k:g}, h {det.h:g}{head}: C⁺ above, C⁻ below"
    out = DetectorChartView(det.id, title)
    starts = [p[0] for p in phases]
    out.phase_starts = [s for s in starts[1:] if s >= shown_from]
    mark = point_mark(det.id)
    # phase of each point (points before the first phase's start take the first phase)
    which = np.array([max(0, bisect_right(starts, int(i)) - 1) for i in indices.tolist()])
    for k, (start, center, _ucl, _lcl, sigma) in enumerate(phases):
        seg = np.flatnonzero(which == k)
        if seg.size == 0 or not sigma:
            continue
        x, idx = values[seg], indices[seg]
        trace, _state = run(det, standardise(x, center, sigma))
        keep = idx >= shown_from
        at = idx[keep].tolist()
        out.indices += at
        hits = [det.id in fired.get(int(i), []) for i in at]
        if isinstance(trace, CusumTrace):
            up, down = trace.upper[keep] * sigma, trace.lower[keep] * sigma
            h = det.h * sigma if isinstance(det, CusumSpec) else 0.0
            out.upper += up.tolist()
            out.lower += down.tolist()
            out.center += [0.0] * len(at)
            out.ucl += [h] * len(at)
            out.lcl += [h] * len(at)
            for hit, u, d in zip(hits, up.tolist(), down.tolist(), strict=True):
                # the side that fired; both when both are over h, the larger one when the
                # recomputation has not settled yet
                on_up = hit and (u > h or (d <= h and u >= d))
                on_down = hit and (d > h or (u <= h and d > u))
                out.upper_marks.append(mark if on_up else "")
                out.lower_marks.append(mark if on_down else "")
        else:
            stat = center + trace.statistic[keep] * sigma
            # the exact limits widen with the position in the phase (from its first point)
            pos = (idx[keep] - start).astype(float) + 1.0
            assert isinstance(det, EwmaSpec)
            lam = det.lam
            half = det.width * np.sqrt(lam / (2.0 - lam) * (1.0 - (1.0 - lam) ** (2.0 * pos)))
            out.upper += stat.tolist()
            out.center += [center] * len(at)
            out.ucl += (center + half * sigma).tolist()
            out.lcl += (center - half * sigma).tolist()
            out.upper_marks += [mark if hit else "" for hit in hits]
    return out

