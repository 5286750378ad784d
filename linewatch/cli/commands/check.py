"""`linewatch check`: chart finished logs, report limits, signals, capability and the false-alarm
budget. Exit 0 when no signal, 1 when signals, 2 for usage or input errors (also when a
characteristic could not be charted: the others are still reported)."""

from __future__ import annotations

import json
import math
import sys
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from linewatch.cli.options import CheckOptions
from linewatch.config.model import CharacteristicConfig, FeedConfig
from linewatch.config.selection import (
    chart_setup,
    feed_for_log,
    load_optional_config,
    select_characteristics,
)
from linewatch.domain.errors import BadLimits, ChartDataError, LinewatchError, NotEnoughData
from linewatch.domain.jsonl import (
    detector_limits_record,
    dumps,
    limits_record,
    not_charted_record,
    rejected_record,
)
from linewatch.domain.records import Rejected
from linewatch.domain.safe_text import json_safe
from linewatch.engine.batch import HistoryResult, analyse_history
from linewatch.engine.detectors.chart_limits import detector_limits
from linewatch.engine.setup import ChartSetup

if TYPE_CHECKING:
    from linewatch.cli.commands.check_investigate import SideData
    from linewatch.cli.commands.check_subgroups import SteppedAnalysis
    from linewatch.engine.phases import PhasedHistory
    from linewatch.engine.setting_regression import SettingRegression
    from linewatch.present.power_view import PowerTable


@dataclass(slots=True)
class Column:
    """All values of one characteristic across the logs, with where each came from."""

    values: np.ndarray
    lines: np.ndarray
    files: list[str]  # the logs read, in order
    file_index: np.ndarray  # for each value, its log's position in `files`


@dataclass(slots=True)
class Analysis:
    """One characteristic's results."""

    config: CharacteristicConfig
    column: Column
    result: HistoryResult
    summary: dict[str, Any]
    setup: ChartSetup  # the charts and the resolved rules (custom run lengths included)
    power: PowerTable | None = None  # detection power of the rule set, known limits
    phased: PhasedHistory | None = None  # the phases, when asked for (`result` is then theirs)
    regression: SettingRegression | None = None  # on the --versus setting


def _read_all(
    paths: list[str], feeds: list[FeedConfig], columns: list[str] | None,
    side: SideData | None = None, side_names: list[str] | None = None,
) -> tuple[dict[str, Column], list[Rejected]]:
    """Read every log into per-characteristic columns plus the rejected rows (and into `side`
    the text of `side_names` per line)."""
    from linewatch.feeds.whole_file import read_logs

    # check reports lines, never time stamps: they are left unread
    if side is not None and side_names:
        from linewatch.feeds.side_columns import read_side_columns
        from linewatch.feeds.whole_file import parse_log_bytes, read_bytes

        batches = []
        for p, feed in zip(paths, feeds, strict=True):
            name, data = read_bytes(p)
            batches.append(parse_log_bytes(data, name, feed, columns, times=False))
            texts, comma = read_side_columns(data, name, feed, side_names)
            side.by_file.append(texts)
            side.decimal_comma.append(comma)
    else:
        batches = read_logs(paths, feeds, columns, times=False)
    names: list[str] = []
    for b in batches:
        names.extend(k for k in b.values if k not in names)
    cols: dict[str, Column] = {}
    files = [b.file for b in batches]
    for name in names:
        if len(batches) == 1:  # one log: its arrays as they are, no copies
            b = batches[0]
            cols[name] = Column(b.values[name], b.lines[name], files,
                                np.zeros(len(b.values[name]), dtype=np.int32))
            continue
        vals = [np.asarray(b.values.get(name, []), dtype=float) for b in batches]
        lines = [np.asarray(b.lines.get(name, []), dtype=np.int64) for b in batches]
        fidx = [np.full(len(v), i, dtype=np.int32) for i, v in enumerate(vals)]
        cols[name] = Column(np.concatenate(vals), np.concatenate(lines), files,
                            np.concatenate(fidx))
    rejected: list[Rejected] = [r for b in batches for r in b.rejected]
    for n in (n for b in batches for n in b.notices):  # nothing lost, but worth knowing
        sys.stderr.write(f"linewatch: warning: {n.file}: line {n.line}: {n.text}\n")
    return cols, rejected


def _summary(values: np.ndarray, c: CharacteristicConfig, setup: ChartSetup,
             result: HistoryResult, rejected: int) -> dict[str, Any]:
    from linewatch.engine.budget.rates import average_run_length
    from linewatch.engine.summary import summarize

    s = summarize(values, sigma_within=result.limits.sigma_within, lsl=c.lsl, usl=c.usl)
    record = {"type": "summary", "characteristic": c.name, "points": int(values.shape[0]),
              "rejected": rejected}
    record.update({k: v for k, v in s.to_dict().items() if k != "points"})
    budget = average_run_length(list(setup.rules))
    finite = math.isfinite(budget.arl)
    record["arl0"] = budget.arl if finite else None  # no rule can fire: no run length
    record["arl0_method"] = budget.method
    record["arl0_std_error"] = budget.std_error
    record["false_alarms_per_1000"] = budget.false_alarms_per_1000
    if result.leftover:
        record["left_out_values"] = result.leftover
    return record


def _with_power(record: dict[str, Any], setup: ChartSetup) -> PowerTable:
    """Add the detection power (`arl_by_shift`, and per shift of the individual values where
    subgroups are charted) to a summary record; the table for the text report."""
    from linewatch.present.power_cache import cached_power
    from linewatch.present.power_table import arl_by_shift, power_table, rule_set_name

    table = power_table(rule_set_name(setup), setup.rules, setup.detectors,
                        setup.subgroup_size)
    record["arl_by_shift"] = arl_by_shift(table)
    if setup.subgroup_size > 1:
        record["arl_by_shift_of_values"] = arl_by_shift(table, "values")
    record["arl_by_shift_simulated"] = table.simulated
    if setup.detectors:  # the in-control run length of the whole set, detectors included
        zero = cached_power(setup.rules, setup.detectors, (0.0,))[0]
        record["arl0"] = zero.arl if math.isfinite(zero.arl) else None
        record["arl0_method"] = zero.method
        record["arl0_std_error"] = zero.std_error
        record["false_alarms_per_1000"] = table.false_alarms_per_1000
    return table


@dataclass(frozen=True, slots=True)
class NotCharted:
    """A characteristic that could not be charted (too few values, σ̂ = 0, limits not finite),
    with the reason; the others are charted all the same."""

    characteristic: str
    values: int
    problem: str


def analyse(
    options: CheckOptions,
) -> tuple[list[Analysis | SteppedAnalysis], list[Rejected], list[NotCharted]]:
    """Read the logs `options` names and chart every selected characteristic; those that
    cannot be charted are returned with the reason instead of stopping the others."""
    from linewatch.cli.commands.check_subgroups import analyse_rows, analyse_short, needs_rows

    config = load_optional_config(options.config)
    chart = options.chart
    logs = list(options.logs)
    feeds = [feed_for_log(config, p, chart) for p in logs]
    chosen = None  # known before reading when named or declared
    if chart.columns or chart.count_column or chart.result_column or config.characteristics:
        chosen = select_characteristics(config, chart, None)
    wanted = None if chosen is None else [c.column for c in chosen if not needs_rows(c)]
    from linewatch.cli.commands.check_investigate import (
        SideData,
        investigate,
        side_names,
        wants_investigation,
    )

    side, beside = SideData(), side_names(options, config)
    cols: dict[str, Column] = {}
    rejected: list[Rejected] = []
    if wanted != []:
        cols, rejected = _read_all(logs, feeds, wanted, side, beside)
    if chosen is None:  # the phase and setting columns are read beside, never charted
        chosen = select_characteristics(config, chart, [c for c in cols if c not in beside])
        grouping = {c.subgroup_by for c in chosen}
        chosen = [c for c in chosen if c.column not in grouping]  # a sample id is no value
    if not chosen:
        raise LinewatchError("no numeric column to chart (name one with --column)")
    out: list[Analysis | SteppedAnalysis] = []
    skipped: list[NotCharted] = []
    resort = False  # rows rejected by another reading are merged into file order
    for c in chosen:
        setup = chart_setup(c, None)
        if needs_rows(c):
            got, more = analyse_rows(c, setup, logs, feeds)
            seen = set(rejected)
            rejected += [r for r in more if r not in seen]
            resort = True
            if isinstance(got, tuple):
                skipped.append(NotCharted(c.name, got[0], got[1]))
            else:
                out.append(got)
            continue
        col = cols[c.column]
        investigating = wants_investigation(options, c)
        problem = ""
        try:
            short = analyse_short(c, setup, col, rejected, feeds)
            if short is not None:  # rejected rows left subgroups short: stepped limits
                out.append(short)
                continue
            result: HistoryResult | None = analyse_history(col.values, setup)
        except (NotEnoughData, BadLimits, ChartDataError) as exc:
            if not investigating or isinstance(exc, ChartDataError):
                skipped.append(NotCharted(c.name, int(col.values.shape[0]), str(exc)))
                continue
            result, problem = None, str(exc)  # a phase may still have enough
        a = Analysis(c, col, result, {}, setup)  # type: ignore[arg-type]
        if investigating:
            try:
                investigate(a, options, side)
            except (NotEnoughData, BadLimits) as exc:
                skipped.append(NotCharted(c.name, int(col.values.shape[0]), str(exc)))
                continue
        if a.result is None:
            skipped.append(NotCharted(c.name, int(col.values.shape[0]), problem))
            continue
        a.summary = _summary(col.values, c, setup, a.result, len(rejected))
        a.power = _with_power(a.summary, setup)
        out.append(a)
    if not out and skipped:  # nothing could be charted: the one-line error, as before
        raise LinewatchError(skipped[0].problem if len(skipped) == 1 else "; ".join(
            f"{n.characteristic}: {n.problem}" for n in skipped))
    if resort:
        order = {name: i for i, name in enumerate(dict.fromkeys(r.file for r in rejected))}
        rejected.sort(key=lambda r: (order[r.file], r.line))
    return out, rejected, skipped


def _signal_lines(a: Analysis | SteppedAnalysis, with_file: bool) -> list[str]:
    """Signal records as JSON text, formatted directly from the firing table: the same text
    `dumps(signal_record())` gives (a test holds them equal), without a json.dumps call each.
    With several logs each record also names the `file` its row came from."""
    name = json_safe(json.dumps(a.config.name, ensure_ascii=False))
    t = a.result.table
    col = a.column
    heads = [[f'{{"type":"signal","characteristic":{name},"chart":"{c}","rule":"{r}","index":'
              for r in t.rules] for c in t.charts]
    lines = col.lines[t.row].tolist()
    if with_file:
        files = [json_safe(json.dumps(f, ensure_ascii=False)) for f in col.files]
        tails = [f',"file":{files[k]}}}' for k in col.file_index[t.row].tolist()]
    else:
        tails = ["}"] * len(lines)
    if t.side is not None:  # a detector's firing says its side, before the file
        sides = {1: ',"side":"up"', -1: ',"side":"down"', 0: ""}
        tails = [sides[d] + tail for d, tail in zip(t.side.tolist(), tails, strict=True)]
    out = []
    for i, c, r, line, v, tail in zip(t.index.tolist(), t.chart.tolist(), t.rule.tolist(),
                                      lines, t.value.tolist(), tails, strict=True):
        value = repr(v) if math.isfinite(v) else "null"
        out.append(f'{heads[c][r]}{i},"line":{line},"value":{value}{tail}')
    return out


def _emit(text: str, output: str | None) -> None:
    """To stdout, or to the file -o names (written whole, then moved into place)."""
    if output is None or output == "-":
        sys.stdout.write(text)
        return
    import os
    import tempfile

    folder = os.path.dirname(os.path.abspath(output))
    try:
        fd, tmp = tempfile.mkstemp(dir=folder, prefix=".linewatch-", suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # as a plain open() would make it, not mkstemp's 0600
        os.replace(tmp, output)
    except OSError as exc:
        raise LinewatchError(f"cannot write {output}: {exc.strerror or exc}") from None


def run(options: CheckOptions) -> int:
    if options.compare_rules is not None:
        from linewatch.cli.commands import compare_rules

        return compare_rules.run(options)
    analyses, rejected, skipped = analyse(options)
    several_files = len(options.logs) > 1
    chunks: list[str] = []
    write = chunks.append
    if options.format in ("html", "markdown"):
        from linewatch.cli.commands.check_page import render_page

        write(render_page(analyses, rejected, skipped, options))
    elif options.format == "jsonl":
        from linewatch.cli.commands.check_points import point_lines, stepped_limit_lines

        lines: list[str] = [dumps(rejected_record(r)) for r in rejected]
        lines += [dumps(not_charted_record(n.characteristic, n.values, n.problem))
                  for n in skipped]
        for a in analyses:
            if isinstance(a, Analysis):
                for lim in (a.result.limits.location, a.result.limits.dispersion):
                    lines.append(dumps(limits_record(a.config.name, lim)))
                for det in a.setup.detectors:
                    dl = detector_limits(det, a.result.limits.location)
                    lines.append(dumps(detector_limits_record(a.config.name, dl, dl.varies,
                                                              dl.parameters)))
            else:
                lines.extend(stepped_limit_lines(a))
            lines.extend(_signal_lines(a, several_files))
            if options.points:
                lines.extend(point_lines(a, several_files))
            lines.append(dumps(a.summary))
            if isinstance(a, Analysis) and (a.phased is not None or a.regression is not None):
                from linewatch.cli.commands.check_records import investigation_records

                lines.extend(dumps(r) for r in investigation_records(a))
        write("\n".join(lines) + "\n")
    else:
        from linewatch.cli.commands.check_text import render_text

        write(render_text(analyses, rejected, several_files, skipped))
    _emit("".join(chunks), options.output)
    from linewatch.domain import exit_codes

    if skipped:  # an input problem, as when no characteristic can be charted at all
        return exit_codes.USAGE
    return exit_codes.SIGNALS if any(len(a.result.table) for a in analyses) else exit_codes.OK
