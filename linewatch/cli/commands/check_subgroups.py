"""`check` for charts whose limits step: subgroups that follow the data (a count of data rows
with rejected rows in it, a sample id, a clock window) and attribute data (pass/fail results,
counts with or without sizes). Reads the rows, forms the subgroups, charts them through
`engine.stepped_history`, and summarises (capability, false-alarm budget, Laney's σ_z)."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from linewatch.cli.commands.check import Column
from linewatch.config.model import CharacteristicConfig, FeedConfig
from linewatch.domain.clock import local_offset
from linewatch.domain.errors import ChartDataError, FeedError, NotEnoughData
from linewatch.domain.records import CHART_C, CHART_LANEY_P, CHART_NP, CHART_P, Rejected
from linewatch.domain.safe_text import visible
from linewatch.engine.row_groups import (
    positions_among,
    sizes_by_label,
    sizes_by_position,
    sizes_by_window,
)
from linewatch.engine.setup import ChartSetup
from linewatch.engine.stepped_history import SteppedResult, analyse_counts, analyse_sized
from linewatch.engine.subgroups import totals_per_subgroup
from linewatch.feeds.labelled_rows import LabelledRows, read_labelled

PROPORTIONS = (CHART_P, CHART_NP, CHART_LANEY_P)


@dataclass(slots=True)
class SteppedAnalysis:
    """One characteristic charted with per-point limits. `column` holds one entry per kept
    row (its measured value, its count, or 1 for a failed part and 0 for a good one)."""

    config: CharacteristicConfig
    column: Column
    result: SteppedResult
    setup: ChartSetup
    summary: dict[str, Any]
    grouping: str  # how the subgroups were formed, in words
    leftover: int  # trailing values of an incomplete last subgroup, left out

    @property
    def sizes(self) -> np.ndarray:
        return self.result.charts[0].sizes


def needs_rows(c: CharacteristicConfig) -> bool:
    """Whether `c` is charted here (attribute data, or subgroups by sample id or window)."""
    return c.is_attribute or c.sizes_vary


def grouping_words(c: CharacteristicConfig) -> str:
    if c.subgroup_by is not None:
        return f"by {visible(c.subgroup_by)}"
    if c.subgroup_window is not None:
        from linewatch.domain.durations import format_duration

        return f"by {format_duration(c.subgroup_window)} clock window"
    return f"of {c.subgroup_size} rows" if c.subgroup_size > 1 else "one per row"


# reading ------------------------------------------------------------------------------------

@dataclass(slots=True)
class _Rows:
    """Kept rows of every log, in order, with what subgrouping needs."""

    values: np.ndarray  # measured value, count, or failed (1) / good (0)
    sizes: np.ndarray | None  # units inspected per row (counts with sizes)
    labels: list[str]
    times: np.ndarray  # epoch seconds, NaN where unknown
    offset: float | None  # the first time stamp's own UTC offset (None: local time)
    positions: np.ndarray  # among all data rows of all logs (a rejected row takes its place)
    total_rows: int
    column: Column


def _result_value(text: str, fails: set[str], passes: set[str]) -> float | None:
    key = text.casefold()
    return 1.0 if key in fails else 0.0 if key in passes else None


def _own_offset(text: str | None) -> float | None:
    """The UTC offset a time stamp carries (seconds east), None when it carries none."""
    if text is None:
        return None
    from datetime import datetime

    try:
        offset = datetime.fromisoformat(text).utcoffset()
    except ValueError:
        return None
    return offset.total_seconds() if offset is not None else None


def _epoch(text: str | None) -> float:
    if text is None:
        return math.nan
    from datetime import datetime

    try:
        stamp = datetime.fromisoformat(text)
    except ValueError:
        return math.nan
    return (stamp if stamp.tzinfo else stamp.astimezone()).timestamp()


def _bad_counts(c: CharacteristicConfig, rows: LabelledRows, keep: np.ndarray
                ) -> list[Rejected]:
    """Rows whose count is no whole number of 0 or more, whose size is not above 0, or (for a
    proportion) whose count exceeds its size: rejected with file and line (`keep` updated), so
    one bad row never stops the chart."""
    assert c.count_column is not None
    d = rows.numbers[c.count_column]
    n = rows.numbers[c.size_column] if c.size_column else None
    out: list[Rejected] = []
    for i in range(d.shape[0]):
        why = None
        if d[i] < 0 or d[i] != np.floor(d[i]):
            why = f"count {d[i]:g} in column '{c.count_column}' is not a whole number ≥ 0"
        elif n is not None and not n[i] > 0:
            why = f"size {n[i]:g} in column '{c.size_column}' is not more than 0"
        elif n is not None and c.effective_chart in PROPORTIONS and d[i] > n[i]:
            why = (f"{d[i]:g} nonconforming of {n[i]:g} inspected ('{c.count_column}' above "
                   f"'{c.size_column}')")
        if why is not None:
            keep[i] = False
            out.append(Rejected(rows.file, int(rows.lines[i]), why))
    return out


def _read_rows(c: CharacteristicConfig, logs: list[str], feeds: list[FeedConfig]
               ) -> tuple[_Rows, list[Rejected]]:
    numeric = [x for x in (c.count_column, c.size_column) if x] if c.count_column else (
        [] if c.result_column else [c.column])
    text = [x for x in (c.result_column, c.subgroup_by) if x]
    fails = {v.strip().casefold() for v in c.fail_values}
    passes = {v.strip().casefold() for v in c.pass_values}
    parts: list[tuple[LabelledRows, np.ndarray, np.ndarray, np.ndarray]] = []
    rejected: list[Rejected] = []
    positions: list[np.ndarray] = []
    start = 0  # each log's data rows follow the last one's
    for log, feed in zip(logs, feeds, strict=True):
        rows = read_labelled(log, feed, numeric, text)
        if c.subgroup_window is not None and rows.time_column is None:
            raise FeedError(f"{rows.file}: subgroups by clock window need a time column "
                            "(name it with time_column in the feed)")
        keep = np.ones(rows.lines.shape[0], dtype=bool)
        own: list[Rejected] = []
        times = np.array([_epoch(t) for t in rows.times], dtype=float)
        if c.result_column is not None:
            got = [_result_value(t, fails, passes) for t in rows.texts[c.result_column]]
            for i, v in enumerate(got):
                if v is None:
                    keep[i] = False
                    own.append(Rejected(rows.file, int(rows.lines[i]), (
                        f"{rows.texts[c.result_column][i][:40]!r} in column "
                        f"'{c.result_column}' is neither a pass nor a fail value (--pass, "
                        "--fail)")))
            values = np.array([0.0 if v is None else v for v in got], dtype=float)
        else:
            values = rows.numbers[numeric[0]]
        if c.count_column is not None:
            own += _bad_counts(c, rows, keep)
        if c.subgroup_window is not None:
            for i in np.flatnonzero(np.isnan(times) & keep).tolist():
                keep[i] = False
                own.append(Rejected(rows.file, int(rows.lines[i]), (
                    f"time stamp {rows.times[i]!r} in column '{rows.time_column}' is not a "
                    "date and time; its clock window is unknown")))
        mine = sorted(rows.rejected + own, key=lambda r: r.line)
        rejected += mine
        kept_lines = rows.lines[keep]
        rej_lines = np.array([r.line for r in mine], dtype=np.int64)
        positions.append(positions_among(kept_lines, rej_lines) + start)
        start += kept_lines.shape[0] + int(np.setdiff1d(rej_lines, kept_lines).shape[0])
        parts.append((rows, keep, values[keep], times[keep]))
    files = [p[0].file for p in parts]
    lines = np.concatenate([p[0].lines[p[1]] for p in parts])
    fidx = np.concatenate([np.full(int(p[1].sum()), i, dtype=np.int32)
                           for i, p in enumerate(parts)])
    values = np.concatenate([p[2] for p in parts])
    sizes = None
    if c.size_column:
        sizes = np.concatenate([p[0].numbers[c.size_column][p[1]] for p in parts])
    labels: list[str] = []
    if c.subgroup_by:
        for rows, keep, _v, _t in parts:
            texts = rows.texts[c.subgroup_by]
            labels += [t for t, k in zip(texts, keep.tolist(), strict=True) if k]
    times = np.concatenate([p[3] for p in parts])
    column = Column(values, lines, files, fidx)
    first = next((t for p in parts for t in p[0].times if t is not None), None)
    return _Rows(values, sizes, labels, times, _own_offset(first), np.concatenate(positions),
                 start, column), rejected


# subgroups ----------------------------------------------------------------------------------

def _sizes(c: CharacteristicConfig, rows: _Rows) -> tuple[np.ndarray, int]:
    """Subgroup sizes (rows per subgroup) and the trailing rows left out."""
    if c.subgroup_by is not None:
        return sizes_by_label(np.asarray(rows.labels, dtype=object), rows.times,
                              c.subgroup_timeout), 0
    if c.subgroup_window is not None:
        if not rows.times.shape[0]:
            return np.zeros(0, dtype=np.int64), 0
        # aligned to the line's clock: the offset its time stamps carry, else the local one
        offset = rows.offset if rows.offset is not None else local_offset(float(rows.times[0]))
        return sizes_by_window(rows.times, c.subgroup_window, offset), 0
    return sizes_by_position(rows.positions, c.subgroup_size, rows.total_rows)


def analyse_rows(c: CharacteristicConfig, setup: ChartSetup, logs: list[str],
                 feeds: list[FeedConfig]
                 ) -> tuple[SteppedAnalysis | tuple[int, str], list[Rejected]]:
    """Read, subgroup and chart one characteristic that needs its rows (`needs_rows`); when it
    cannot be charted, (values read, why) instead of the analysis."""
    rows, rejected = _read_rows(c, logs, feeds)
    sizes, leftover = _sizes(c, rows)
    used = int(sizes.sum())
    values = rows.values[:used]
    try:
        if c.is_attribute:
            result = _attribute(c, setup, rows, sizes)
        else:
            result = analyse_sized(values, sizes, setup)
    except (NotEnoughData, ChartDataError) as exc:
        return (int(rows.values.shape[0]), str(exc)), rejected
    summary = _summary(c, setup, result, values, sizes, len(rejected), leftover)
    column = Column(rows.column.values, rows.column.lines, rows.column.files,
                    rows.column.file_index)
    return SteppedAnalysis(c, column, result, setup, summary, grouping_words(c),
                           leftover), rejected


def analyse_short(c: CharacteristicConfig, setup: ChartSetup, col: Column,
                  rejected: list[Rejected], feeds: list[FeedConfig]) -> SteppedAnalysis | None:
    """Measured values in subgroups of `subgroup_size` data rows when rejected rows left some
    subgroups short (each rejected row of a wide log keeps its place); None when every
    subgroup is complete, which the fixed-size path charts as ever."""
    n = c.subgroup_size
    if n == 1 or not rejected or setup.detectors or any(f.layout != "wide" for f in feeds):
        return None
    positions: list[np.ndarray] = []
    start = 0
    for i, name in enumerate(col.files):
        kept = col.lines[col.file_index == i]
        rej = np.array([r.line for r in rejected if r.file == name], dtype=np.int64)
        positions.append(positions_among(kept, rej) + start)
        start += kept.shape[0] + int(np.setdiff1d(rej, kept).shape[0])
    sizes, leftover = sizes_by_position(np.concatenate(positions), n, start)
    if not sizes.shape[0] or np.all(sizes == n):
        return None
    used = int(sizes.sum())
    result = analyse_sized(col.values[:used], sizes, setup)
    summary = _summary(c, setup, result, col.values[:used], sizes, len(rejected), leftover)
    return SteppedAnalysis(c, col, result, setup, summary, grouping_words(c), leftover)


def _attribute(c: CharacteristicConfig, setup: ChartSetup, rows: _Rows, sizes: np.ndarray
               ) -> SteppedResult:
    used = int(sizes.sum())
    d = totals_per_subgroup(rows.values[:used], sizes)
    if c.result_column is not None:
        n = sizes.astype(float)  # parts tested in each subgroup
    elif rows.sizes is not None:
        n = totals_per_subgroup(rows.sizes[:used], sizes)
    else:
        n = np.ones(d.shape[0])
    last = np.cumsum(sizes) - 1
    if setup.attribute_chart == CHART_NP and n.shape[0] and np.any(n != n[0]):
        raise ChartDataError(
            f"an np chart needs one subgroup size throughout; here sizes run from "
            f"{int(n.min())} to {int(n.max())}: use the p chart (--chart p) for varying sizes")
    return analyse_counts(d, n, last, setup)


# summary ------------------------------------------------------------------------------------

def _summary(c: CharacteristicConfig, setup: ChartSetup, result: SteppedResult,
             values: np.ndarray, sizes: np.ndarray, rejected: int, leftover: int
             ) -> dict[str, Any]:
    record: dict[str, Any] = {
        "type": "summary", "characteristic": c.name, "points": int(values.shape[0]),
        "rejected": rejected, "subgroups": int(sizes.shape[0]),
        "subgroup_sizes": [int(sizes.min()), int(sizes.max())] if sizes.shape[0] else None,
    }
    if leftover:
        record["left_out_values"] = leftover
    if c.is_attribute:  # the sizes are the units inspected (parts tested), not rows
        n = result.charts[0].sizes
        record["subgroup_sizes"] = [float(n.min()), float(n.max())] if n.shape[0] else None
        record.update(_attribute_summary(c, result))
        return record
    from linewatch.engine.budget.rates import average_run_length
    from linewatch.engine.summary import summarize

    s = summarize(values, sigma_within=result.model.sigma if hasattr(result.model, "sigma")
                  else None, lsl=c.lsl, usl=c.usl)
    record.update({k: v for k, v in s.to_dict().items() if k != "points"})
    record["single_value_subgroups"] = result.singles.tolist()
    budget = average_run_length(list(setup.rules))  # z of each point is standard normal
    record["arl0"] = budget.arl if math.isfinite(budget.arl) else None
    record["arl0_method"] = budget.method
    record["arl0_std_error"] = budget.std_error
    record["false_alarms_per_1000"] = budget.false_alarms_per_1000
    return record


def _attribute_summary(c: CharacteristicConfig, result: SteppedResult) -> dict[str, Any]:
    from linewatch.engine.attribute_budget import mean_probability
    from linewatch.engine.attribute_capability import (
        NOT_APPLICABLE,
        proportion_capability,
        rate_capability,
    )

    series = result.charts[0]
    chart = series.chart
    counts = series.values * (1.0 if chart in (CHART_NP, CHART_C) else series.sizes)
    events = round(float(counts.sum()))
    exposure = float(series.sizes.sum())
    if chart in PROPORTIONS:
        cap = proportion_capability(events, round(exposure))
    else:
        cap = rate_capability(events, exposure)
    verdict = result.verdict
    beyond = mean_probability(result.model, series.sizes)  # type: ignore[arg-type]
    return {
        "chart": chart,
        "center": result.model.center if hasattr(result.model, "chart") else None,
        "sigma_z": None if verdict is None or math.isnan(verdict.sigma_z) else verdict.sigma_z,
        "sigma_z_band": None if verdict is None else verdict.band,
        "laney_suggested": bool(verdict is not None and verdict.suggests_laney and
                                chart not in ("laney-p", "laney-u")),
        "capability": cap.kind, "events": events, "exposure": exposure,
        "estimate": cap.estimate, "ci95": [cap.lower, cap.upper],
        "ppm": cap.ppm[0], "ppm_ci95": [cap.ppm[1], cap.ppm[2]],
        "cp": None, "cpk": None, "cp_note": NOT_APPLICABLE,
        "beyond_limits_per_1000": None if beyond is None else beyond * 1000.0,
        "beyond_limits_method": "exact binomial" if chart in (CHART_P, CHART_NP) else
        "exact Poisson" if beyond is not None else None,
    }
