"""Which characteristics to chart and how: the config's declarations with command-line overrides.

`check` and `watch` share this, so the same options mean the same thing in both.
The overrides come as a typed ChartOverrides (checked when made), never as parsed arguments.
"""

from __future__ import annotations

import fnmatch
import os
from dataclasses import replace

from linewatch.config.chart_choice import chart_problem
from linewatch.config.loading import load_config
from linewatch.config.model import CharacteristicConfig, Config, FeedConfig
from linewatch.config.overrides import ChartOverrides, split_values
from linewatch.domain.errors import LinewatchError, RuleListError
from linewatch.engine.rulebook import CUSUM, EWMA, resolve_detectors, resolve_rules
from linewatch.engine.setup import ChartSetup


def load_optional_config(path: str | None) -> Config:
    """The config at `path`, or an empty default one."""
    return load_config(path) if path else Config()


JSON_SUFFIXES = (".jsonl", ".ndjson", ".json")


def looks_like_json_lines(path: str) -> bool:
    """A log is JSON lines by its name, or when its first non-blank byte opens an object."""
    if path.lower().endswith(JSON_SUFFIXES):
        return True
    if path == "-" or not os.path.isfile(path):  # a FIFO would block here: read_log says so
        return False
    try:
        with open(path, "rb") as f:
            head = f.read(512).lstrip(b"\xef\xbb\xbf \t\r\n")
    except OSError:
        return False
    return head.startswith(b"{")


def feed_for_log(config: Config, path: str, overrides: ChartOverrides) -> FeedConfig:
    """How to read one log named on the command line: the config feed whose paths match it,
    else the config's first feed, else defaults (JSON lines recognised by name or content)."""
    feed = None
    for f in config.feeds:
        if any(fnmatch.fnmatch(os.path.abspath(path), os.path.abspath(p)) or
               fnmatch.fnmatch(os.path.basename(path), os.path.basename(p)) for p in f.paths):
            feed = f
            break
    if feed is None and config.feeds:
        feed = config.feeds[0]
    feed = replace(feed) if feed is not None else FeedConfig(paths=[])
    if not config.feeds and looks_like_json_lines(path):
        feed.layout = "jsonl"
    if overrides.decimal:
        feed.decimal = overrides.decimal
    return feed


def select_characteristics(
    config: Config, overrides: ChartOverrides, available: list[str] | None
) -> list[CharacteristicConfig]:
    """Characteristics to chart: `--column` picks, else the config's, else every numeric column.

    `available` lists the numeric columns found in the data (None when not known yet, as when
    following files that do not exist yet); an unknown column is an error that lists them.
    """
    declared = {c.column: c for c in config.characteristics}
    by_name = {c.name: c for c in config.characteristics}
    attribute_column = overrides.count_column or overrides.result_column
    if attribute_column and not overrides.columns:  # the one characteristic counted there
        chosen = [next((c for c in config.characteristics
                        if attribute_column in (c.count_column, c.result_column, c.name)),
                       CharacteristicConfig(name=attribute_column, column=attribute_column))]
    elif overrides.columns:
        chosen = []
        for col in overrides.columns:
            c = by_name.get(col) or declared.get(col) or CharacteristicConfig(name=col, column=col)
            chosen.append(c)
    elif config.characteristics:
        chosen = list(config.characteristics)
    else:
        chosen = [CharacteristicConfig(name=c, column=c) for c in (available or [])]
    if available is not None:  # (the reader of attribute data checks its own columns)
        missing = [c.column for c in chosen if c.column not in available and not
                   (c.is_attribute or attribute_column)]
        if missing:
            there = ", ".join(available) if available else "none"
            raise LinewatchError(
                f"unknown column {missing[0]!r} (numeric columns in the data: {there})"
            )
    return [apply_overrides(c, overrides) for c in chosen]


def apply_overrides(c: CharacteristicConfig, overrides: ChartOverrides) -> CharacteristicConfig:
    """Command-line chart options win over the config's values for every characteristic."""
    c = replace(c)
    o = overrides
    rules = o.rule_ids()
    if rules is not None:
        c.rules = rules
    if o.center is not None:
        c.center, c.sigma = o.center, o.sigma
    if o.baseline is not None:
        c.baseline = o.baseline
    if o.subgroup_size is not None:  # one way of forming subgroups replaces the config's
        c.subgroup_size, c.subgroup_by, c.subgroup_window = o.subgroup_size, None, None
    if o.subgroup_by is not None:
        c.subgroup_size, c.subgroup_by, c.subgroup_window = 1, o.subgroup_by.strip(), None
    if o.subgroup_window is not None:
        c.subgroup_size, c.subgroup_by, c.subgroup_window = 1, None, o.window_seconds()
    if o.count_column is not None:
        c.count_column, c.size_column, c.result_column = (
            o.count_column.strip(), o.size_column.strip() if o.size_column else None, None)
    if o.result_column is not None:
        c.count_column, c.size_column, c.result_column = None, None, o.result_column.strip()
    if o.attribute_chart is not None:
        c.chart = o.attribute_chart
    if o.fail_values is not None:
        c.fail_values = split_values(o.fail_values)
    if o.pass_values is not None:
        c.pass_values = split_values(o.pass_values)
    if o.dispersion is not None:
        c.dispersion = o.dispersion
    if o.lsl is not None:
        c.lsl = o.lsl
    if o.usl is not None:
        c.usl = o.usl
    if o.clear_after is not None:
        c.clear_after = o.clear_after
    given = o.detector_options()
    c.ewma = {**c.ewma, **given.get(EWMA, {})}
    c.cusum = {**c.cusum, **given.get(CUSUM, {})}
    if c.lsl is not None and c.usl is not None and c.lsl >= c.usl:
        raise LinewatchError(f"{c.name}: LSL must be below USL ({c.lsl} >= {c.usl})")
    problem = chart_problem(c)
    if problem is not None:
        raise LinewatchError(f"{c.name}: {problem[1]}")
    return c


def chart_setup(c: CharacteristicConfig, default_baseline: int | None) -> ChartSetup:
    """The engine's view of a characteristic."""
    try:
        specs = tuple(resolve_rules(c.rules, c.run_lengths))
    except RuleListError as exc:
        raise LinewatchError(f"{c.name}: {exc}") from None
    try:
        detectors = tuple(resolve_detectors(c.rules, {EWMA: c.ewma, CUSUM: c.cusum}))
    except RuleListError as exc:
        raise LinewatchError(f"{c.name}: {exc}") from None
    if detectors and (c.sizes_vary or c.effective_chart is not None):
        raise LinewatchError(
            f"{c.name}: {', '.join(d.id for d in detectors)} chart measured values in "
            "subgroups of one size (--subgroup-size); leave them out of this rule list")
    return ChartSetup(
        name=c.name,
        subgroup_size=c.subgroup_size,
        dispersion=c.effective_dispersion,
        rules=specs,
        baseline=c.baseline if c.baseline is not None else default_baseline,
        center=c.center,
        sigma=c.sigma,
        detectors=detectors,
        subgroups="label" if c.subgroup_by else "window" if c.subgroup_window else "count",
        window=c.subgroup_window,
        timeout=c.subgroup_timeout if c.subgroup_by else None,
        attribute_chart=c.effective_chart,
    )
