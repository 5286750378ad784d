"""Which characteristics to chart and how: the config's declarations with command-line overrides.

`check` and `watch` share this, so the same options mean the same thing in both.
"""

from __future__ import annotations

import argparse
import fnmatch
import os
from dataclasses import replace

from linewatch.config.loading import (
    DISPERSIONS,
    CharacteristicConfig,
    Config,
    FeedConfig,
    load_config,
)
from linewatch.domain.errors import LinewatchError, RuleListError
from linewatch.domain.records import MAX_MAGNITUDE
from linewatch.engine.rulebook import parse_rule_list, resolve_rules
from linewatch.engine.setup import ChartSetup


def load_optional_config(path: str | None) -> Config:
    """The config at `path`, or an empty default one."""
    return load_config(path) if path else Config()


def validate_chart_options(args: argparse.Namespace) -> None:
    """Reject contradictory or impossible chart options with a one-line reason."""
    for option in ("center", "sigma", "lsl", "usl"):
        value = getattr(args, option, None)
        if value is not None and not -MAX_MAGNITUDE <= value <= MAX_MAGNITUDE:
            raise LinewatchError(
                f"--{option} {value:g} is out of range (more than {MAX_MAGNITUDE:g} in magnitude)")
    if (args.center is None) != (args.sigma is None):
        raise LinewatchError("--center and --sigma go together")
    if args.sigma is not None and not args.sigma > 0:
        raise LinewatchError(f"--sigma must be more than 0 (σ ≤ 0 given: {args.sigma})")
    if args.lsl is not None and args.usl is not None and args.lsl >= args.usl:
        raise LinewatchError(f"--lsl must be below --usl ({args.lsl} >= {args.usl})")
    if args.subgroup_size is not None and not 1 <= args.subgroup_size <= 25:
        raise LinewatchError("--subgroup-size must be between 1 and 25")
    if args.baseline is not None and args.baseline < 2:
        raise LinewatchError("--baseline needs at least 2 plotted points")
    if args.dispersion is not None and args.dispersion not in DISPERSIONS:
        raise LinewatchError(f"--dispersion must be one of {', '.join(DISPERSIONS)}")
    clear_after = getattr(args, "clear_after", None)
    if clear_after is not None and clear_after < 1:
        raise LinewatchError("--clear-after needs at least 1 quiet point")
    if args.rules:
        try:
            parse_rule_list(args.rules)
        except RuleListError as exc:
            raise LinewatchError(f"--rules: {exc}") from None


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


def feed_for_log(config: Config, path: str, args: argparse.Namespace) -> FeedConfig:
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
    if getattr(args, "decimal", None):
        feed.decimal = args.decimal
    return feed


def select_characteristics(
    config: Config, args: argparse.Namespace, available: list[str] | None
) -> list[CharacteristicConfig]:
    """Characteristics to chart: `--column` picks, else the config's, else every numeric column.

    `available` lists the numeric columns found in the data (None when not known yet, as when
    following files that do not exist yet); an unknown column is an error that lists them.
    """
    declared = {c.column: c for c in config.characteristics}
    by_name = {c.name: c for c in config.characteristics}
    if args.column:
        chosen = []
        for col in args.column:
            c = by_name.get(col) or declared.get(col) or CharacteristicConfig(name=col, column=col)
            chosen.append(c)
    elif config.characteristics:
        chosen = list(config.characteristics)
    else:
        chosen = [CharacteristicConfig(name=c, column=c) for c in (available or [])]
    if available is not None:
        missing = [c.column for c in chosen if c.column not in available]
        if missing:
            there = ", ".join(available) if available else "none"
            raise LinewatchError(
                f"unknown column {missing[0]!r} (numeric columns in the data: {there})"
            )
    return [apply_overrides(c, args) for c in chosen]


def apply_overrides(c: CharacteristicConfig, args: argparse.Namespace) -> CharacteristicConfig:
    """Command-line chart options win over the config's values for every characteristic."""
    c = replace(c)
    if args.rules:
        c.rules = parse_rule_list(args.rules)
    if args.center is not None:
        c.center, c.sigma = args.center, args.sigma
    if args.baseline is not None:
        c.baseline = args.baseline
    if args.subgroup_size is not None:
        c.subgroup_size = args.subgroup_size
    if args.dispersion is not None:
        c.dispersion = args.dispersion
    if args.lsl is not None:
        c.lsl = args.lsl
    if args.usl is not None:
        c.usl = args.usl
    if getattr(args, "clear_after", None) is not None:
        c.clear_after = args.clear_after
    if c.lsl is not None and c.usl is not None and c.lsl >= c.usl:
        raise LinewatchError(f"{c.name}: LSL must be below USL ({c.lsl} >= {c.usl})")
    return c


def chart_setup(c: CharacteristicConfig, default_baseline: int | None) -> ChartSetup:
    """The engine's view of a characteristic."""
    try:
        specs = tuple(resolve_rules(c.rules, c.run_lengths))
    except RuleListError as exc:
        raise LinewatchError(f"{c.name}: {exc}") from None
    return ChartSetup(
        name=c.name,
        subgroup_size=c.subgroup_size,
        dispersion=c.effective_dispersion,
        rules=specs,
        baseline=c.baseline if c.baseline is not None else default_baseline,
        center=c.center,
        sigma=c.sigma,
    )
