"""The picture of a characteristic whose limits step (subgroups that follow the data, attribute
charts), from the points the collector stored with their own limits (`store.stepped`): the
charts with their limits as steps, the newest proportion or rate against its limit, and the
overall proportion or rate with its exact interval."""

from __future__ import annotations

from typing import TYPE_CHECKING

from linewatch.engine.attribute_capability import NOT_APPLICABLE
from linewatch.engine.variable_limits import SizeModel
from linewatch.present.attribute_figures import attribute_capability
from linewatch.present.mark_points import mark_chart
from linewatch.present.view import AttributeFigures, CharacteristicView, ChartView

if TYPE_CHECKING:
    from linewatch.config.model import CharacteristicConfig
    from linewatch.store.db import Store
    from linewatch.store.stepped_points import StoredSteppedPoint


def chart_names_of(c: CharacteristicConfig) -> tuple[str, ...]:
    """The charts a stepped characteristic draws: its attribute chart, or X̄ and S (or R)."""
    chart = c.effective_chart
    if chart is not None:
        return (chart,)
    return SizeModel(0.0, 1.0, c.effective_dispersion, "").charts


def stepped_chart(recs: list[StoredSteppedPoint], chart: str, marks: dict[int, list[str]],
                  phase_starts: list[int]) -> ChartView:
    """One chart's points; every change of limits becomes an entry of `phase_limits`, which
    the chart draws from that point on: steps."""
    cv = ChartView(chart, [r.value for r in recs], [r.index for r in recs],
                   [",".join(marks.get(r.index, [])) for r in recs], steps=True,
                   sizes=[r.n for r in recs], phase_starts=phase_starts)
    last: tuple[float, float, float, float] | None = None
    for r in recs:
        if r.center is None or r.ucl is None or r.lcl is None or r.sigma is None:
            continue
        now = (r.center, r.ucl, r.lcl, r.sigma)
        if now != last:
            cv.phase_limits.append((r.index, *now))
            last = now
    if last is not None:
        cv.center, cv.ucl, cv.lcl, cv.sigma = last
    return mark_chart(cv)


def fill_stepped(store: Store, c: CharacteristicConfig, v: CharacteristicView, points: int,
                 phase_starts: list[int]) -> None:
    """Fill the charts (and, for attribute data, the figures) of `v` from the stored points."""
    names = chart_names_of(c)
    recs_of = {name: store.stepped.last(c.name, name, points) for name in names}
    first = min((recs[0].index for recs in recs_of.values() if recs), default=0)
    # exactly the points at which a rule fired
    marks = store.alarms.signals_over(c.name, first)
    charts = [stepped_chart(recs_of[name], name, marks.get(name, {}), phase_starts)
              for name in names]
    v.location = charts[0]
    v.dispersion = charts[1] if len(charts) > 1 else None
    chart = c.effective_chart
    if chart is None:
        return
    loc = v.location
    newest = store.stepped.last(c.name, chart, 1)
    last = newest[-1] if newest else None
    cap = attribute_capability(store, c)
    what = "proportion nonconforming" if chart in ("p", "np", "laney-p") else "defects per unit"
    value = None if last is None else last.value
    center, ucl, lcl = (None, None, None) if last is None else (last.center, last.ucl, last.lcl)
    if chart == "np" and last is not None and last.n:  # the gauge shows the proportion
        value, center, ucl, lcl = (None if x is None else x / last.n
                                   for x in (value, center, ucl, lcl))
    v.attribute = AttributeFigures(
        chart, what, value, center, ucl, lcl,
        overall=None if cap is None else cap.estimate,
        lower95=None if cap is None else cap.lower, upper95=None if cap is None else cap.upper,
        ppm=None if cap is None else cap.ppm[0], events=0 if cap is None else cap.events,
        exposure=0.0 if cap is None else cap.exposure, not_applicable=NOT_APPLICABLE)
    v.recent_mean = value
    if loc.values:
        v.last_value = loc.values[-1]
