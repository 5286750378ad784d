"""The batch path for charts whose limits step: subgroups of varying size (X̄-S, X̄-R) and the
attribute charts (p, np, c, u, Laney p′ and u′), over a whole history at once.

Each chart is judged through its standardised points (`stepped.evaluate_stepped`), so the run
rules are the unchanged ones; the firings come back in the same `FiringTable` as
`batch.analyse_history` gives for fixed subgroups, ordered by point, chart, then rule.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from linewatch.domain.errors import NotEnoughData
from linewatch.domain.records import CHART_C
from linewatch.engine.attribute_charts import (
    AttributeModel,
    attribute_chart,
    estimate_attribute,
)
from linewatch.engine.batch import FiringTable
from linewatch.engine.laney import Dispersion
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stepped import SteppedSeries, evaluate_stepped
from linewatch.engine.subgroups import SubgroupStats, subgroup_stats
from linewatch.engine.variable_limits import (
    SizeModel,
    estimate_model,
    given_model,
    variable_charts,
)


@dataclass(slots=True)
class SteppedResult:
    """Charts with per-point limits and the firings on them."""

    charts: tuple[SteppedSeries, ...]  # location (or the attribute chart) first
    table: FiringTable
    model: SizeModel | AttributeModel
    baseline: int  # subgroups the Phase I figures came from (all of them when given)
    stats: SubgroupStats | None = None  # variables: the per-subgroup figures
    verdict: Dispersion | None = None  # attribute charts: σ_z of the baseline

    @property
    def singles(self) -> np.ndarray:
        """Subgroup positions of one value (on the X̄ chart only)."""
        return self.stats.singles if self.stats is not None else np.zeros(0, dtype=np.int64)


def _table(charts: tuple[SteppedSeries, ...], rules: tuple[tuple[str, ...], ...],
           specs_of: list[dict[str, np.ndarray]]) -> FiringTable:
    rule_ids: list[str] = []
    for ids in rules:
        rule_ids += [r for r in ids if r not in rule_ids]
    parts = []
    for c, (series, fired) in enumerate(zip(charts, specs_of, strict=True)):
        for rule_id, mask in fired.items():
            pos = np.flatnonzero(mask)
            parts.append((series.indices[pos], c, rule_ids.index(rule_id), series.rows[pos],
                          series.values[pos]))
    names = tuple(s.chart for s in charts)
    if not parts:
        empty = np.zeros(0, dtype=np.int64)
        return FiringTable(empty, empty, empty, empty, np.zeros(0), names, tuple(rule_ids))
    index = np.concatenate([p[0] for p in parts])
    chart = np.concatenate([np.full(p[0].shape[0], p[1], dtype=np.int8) for p in parts])
    rule = np.concatenate([np.full(p[0].shape[0], p[2], dtype=np.int16) for p in parts])
    row = np.concatenate([p[3] for p in parts])
    value = np.concatenate([p[4] for p in parts])
    order = np.lexsort((rule, chart, index))
    return FiringTable(index[order], chart[order], rule[order], row[order], value[order],
                       names, tuple(rule_ids))


def analyse_sized(values: np.ndarray, sizes: np.ndarray, setup: ChartSetup) -> SteppedResult:
    """X̄ and S (or R) charts of consecutive subgroups of `sizes` values each: Phase I from the
    first `setup.baseline` subgroups (all when None), or the given centre and σ."""
    stats = subgroup_stats(values, sizes)
    if setup.center is not None and setup.sigma is not None:
        model = given_model(setup.center, setup.sigma, setup.dispersion)
        base = int(stats.sizes.shape[0])
    else:
        model = estimate_model(stats, setup.dispersion, setup.baseline)
        base = int(stats.sizes.shape[0]) if setup.baseline is None else min(
            setup.baseline, int(stats.sizes.shape[0]))
    loc, disp = variable_charts(stats, model)
    fired = [evaluate_stepped(loc, setup.rules), evaluate_stepped(disp, setup.dispersion_rules)]
    rules = (tuple(r.id for r in setup.rules), tuple(r.id for r in setup.dispersion_rules))
    return SteppedResult((loc, disp), _table((loc, disp), rules, fired), model, base, stats)


def analyse_counts(counts: np.ndarray, sizes: np.ndarray, rows: np.ndarray,
                   setup: ChartSetup) -> SteppedResult:
    """The attribute chart `setup.attribute_chart` of subgroups with `counts` (nonconforming
    units or defects) found in `sizes` (units or inspection units; ignored by c); `rows` is the
    position of each subgroup's last row in the input, for its line."""
    chart = setup.attribute_chart
    if chart is None:
        raise ValueError("an attribute chart is needed")
    m = int(np.asarray(counts).shape[0])
    if setup.center is None and m < 2:
        raise NotEnoughData(f"too few subgroups for limits on {setup.name}: {m}, 2 needed")
    model, verdict = estimate_attribute(chart, counts, sizes, setup.baseline, setup.center)
    base = m if setup.baseline is None else min(setup.baseline, m)
    series = attribute_chart(chart, counts, sizes, model)
    series = replace(series, rows=np.asarray(rows, dtype=np.int64))
    if chart == CHART_C:  # a c chart has no sizes: its n is 1 inspection area
        series = replace(series, sizes=np.ones(m))
    fired = [evaluate_stepped(series, setup.rules)]
    table = _table((series,), (tuple(r.id for r in setup.rules),), fired)
    return SteppedResult((series,), table, model, base, None, verdict)
