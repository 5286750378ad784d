"""The jsonl records of `check` for per-point limits: a stepped chart's `limits` record and,
with `--points`, one `point` record per plotted point (fixed-size charts too)."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from linewatch.domain.jsonl import dumps, point_record, stepped_limits_record

if TYPE_CHECKING:
    from linewatch.cli.commands.check import Analysis
    from linewatch.cli.commands.check_subgroups import SteppedAnalysis


def _constant(a: np.ndarray) -> float | None:
    return float(a[0]) if a.shape[0] and bool(np.all(a == a[0])) else None


def stepped_limit_lines(a: SteppedAnalysis) -> list[str]:
    """One limits record per chart; UCL/LCL null and `varies` true where they step."""
    out = []
    for s in a.result.charts:
        lim = s.limits
        out.append(dumps(stepped_limits_record(
            a.config.name, s.chart, _constant(lim.center), _constant(lim.sigma),
            _constant(lim.ucl), _constant(lim.lcl), lim.varies)))
    return out


def point_lines(a: Analysis | SteppedAnalysis, with_file: bool) -> list[str]:
    """One record per plotted point of every chart, in chart order then point order."""
    from linewatch.cli.commands.check import Analysis

    name = a.config.name
    col = a.column
    out: list[str] = []

    def emit(chart: str, index: int, row: int, value: float, n: float, center: float,
             ucl: float, lcl: float) -> None:
        record = point_record(name, chart, index, int(col.lines[row]), value, n, center, ucl,
                              lcl)
        if with_file:
            record["file"] = col.files[int(col.file_index[row])]
        out.append(dumps(record))

    if isinstance(a, Analysis):
        from linewatch.engine.charts import plotted_series

        n = a.setup.subgroup_size
        loc, disp = plotted_series(col.values, n, a.setup.dispersion)
        for series, lim, size in ((loc, a.result.limits.location, n),
                                  (disp, a.result.limits.dispersion, 2 if n == 1 else n)):
            for i, r, v in zip(series.indices.tolist(), series.rows.tolist(),
                               series.values.tolist(), strict=True):
                emit(series.chart, i, r, v, size, lim.center, lim.ucl, lim.lcl)
        return out
    for s in a.result.charts:
        steps = s.limits
        for k, (i, r, v, size) in enumerate(zip(s.indices.tolist(), s.rows.tolist(),
                                                s.values.tolist(), s.sizes.tolist(),
                                                strict=True)):
            emit(s.chart, i, r, v, size, float(steps.center[k]), float(steps.ucl[k]),
                 float(steps.lcl[k]))
    return out
