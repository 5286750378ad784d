"""The batch path: limits and rule firings over a whole series at once, with numpy.

`analyse_history` is what `check` runs. Given the same values and setup, the live engine
(`engine.live`) fed in any chunking gives the same limits and firings (a property test holds
them to it).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from linewatch.domain.errors import NotEnoughData
from linewatch.engine.charts import plotted_series
from linewatch.engine.limits import (
    MIN_BASELINE,
    ChartLimits,
    LimitSet,
    estimate_limits,
    given_limits,
)
from linewatch.engine.rulebook import RuleSpec
from linewatch.engine.rules import classify, evaluate_classified
from linewatch.engine.setup import ChartSetup, Firing, limit_state


@dataclass(frozen=True, slots=True)
class FiringTable:
    """Firings of a whole history as parallel arrays, ordered by point, chart, then rule."""

    index: np.ndarray
    chart: np.ndarray  # position in `charts`
    rule: np.ndarray  # position in `rules`
    row: np.ndarray
    value: np.ndarray
    charts: tuple[str, ...]
    rules: tuple[str, ...]

    def __len__(self) -> int:
        return int(self.index.shape[0])


@dataclass(slots=True)
class HistoryResult:
    """What `analyse_history` found."""

    limits: LimitSet
    location: np.ndarray
    dispersion: np.ndarray
    table: FiringTable
    leftover: int  # values of a trailing incomplete subgroup, left out

    @property
    def firings(self) -> list[Firing]:
        """The firings as records (the table is the fast form for large histories)."""
        t = self.table
        return [
            Firing(t.charts[c], t.rules[r], i, w, v)
            for i, c, r, w, v in zip(t.index.tolist(), t.chart.tolist(), t.rule.tolist(),
                                     t.row.tolist(), t.value.tolist(), strict=True)
        ]


def _evaluate_series(
    values: np.ndarray, lim: ChartLimits, specs: Iterable[RuleSpec]
) -> dict[str, np.ndarray]:
    st = limit_state(lim)
    x = np.asarray(values, dtype=float)
    side, level = classify(x, st.center, st.sigma, st.ucl, st.lcl)  # once for every rule
    return {s.id: evaluate_classified(s, x, side, level) for s in specs}


def analyse_history(values: np.ndarray, setup: ChartSetup) -> HistoryResult:
    """Limits and rule firings over a whole series of individual values (vectorised)."""
    x = np.asarray(values, dtype=float)
    n = setup.subgroup_size
    loc, disp = plotted_series(x, n, setup.dispersion)
    leftover = x.shape[0] - (x.shape[0] // n) * n if n > 1 else 0
    if setup.sigma is not None and setup.center is not None:
        limits = given_limits(setup.center, setup.sigma, n, setup.dispersion)
    else:
        b = loc.values.shape[0] if setup.baseline is None else setup.baseline
        if loc.values.shape[0] < max(b, MIN_BASELINE):
            need = max(b, MIN_BASELINE) * n
            raise NotEnoughData(
                f"too few points for limits on {setup.name}: {x.shape[0] - leftover} values, "
                f"{need} needed"
            )
        disp_base = disp.values[: b - 1] if n == 1 else disp.values[:b]
        limits = estimate_limits(loc.values[:b], disp_base, n, setup.dispersion)
    rule_ids = tuple(r.id for r in setup.rules)
    parts: list[tuple[np.ndarray, int, int, np.ndarray, np.ndarray]] = []
    for c, (series, lim, specs) in enumerate((
        (loc, limits.location, setup.rules),
        (disp, limits.dispersion, setup.dispersion_rules),
    )):
        for rule_id, fired in _evaluate_series(series.values, lim, specs).items():
            pos = np.flatnonzero(fired)
            parts.append((series.indices[pos], c, rule_ids.index(rule_id), series.rows[pos],
                          series.values[pos]))
    if parts:
        index = np.concatenate([p[0] for p in parts])
        chart = np.concatenate([np.full(p[0].shape[0], p[1], dtype=np.int8) for p in parts])
        rule = np.concatenate([np.full(p[0].shape[0], p[2], dtype=np.int16) for p in parts])
        row = np.concatenate([p[3] for p in parts])
        value = np.concatenate([p[4] for p in parts])
        order = np.lexsort((rule, chart, index))
        table = FiringTable(index[order], chart[order], rule[order], row[order], value[order],
                            setup.charts, rule_ids)
    else:
        empty = np.zeros(0, dtype=np.int64)
        table = FiringTable(empty, empty, empty, empty, np.zeros(0), setup.charts, rule_ids)
    return HistoryResult(limits, loc.values, disp.values, table, leftover)
