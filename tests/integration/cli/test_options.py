"""Each command's typed options record and the argument parser cannot drift apart: every parser
destination has a field and every field a destination; the parser declares no defaults, so the
record's are the only ones, and help texts that state a default state the real one. The
dispatcher builds the record in one place, and the bare command and `demo` hand `watch` a
record they build themselves (no command line parsed twice)."""

from __future__ import annotations

import argparse
import dataclasses
import re
import signal
from collections.abc import Iterator
from pathlib import Path
from typing import Any, get_type_hints

import pytest

from linewatch.cli import options as opts
from linewatch.cli.main import COMMANDS, SELECTORS, build_parser, options_from
from linewatch.config.fields import field_default
from linewatch.config.model import DEFAULT_SHELVE_MAX, CharacteristicConfig
from linewatch.config.overrides import ChartOverrides
from linewatch.domain.durations import parse_duration

# check judges finished logs and raises no alarms: an alarm episode's end is not its business
NOT_OFFERED = {("check", None): {"clear_after"}}


def _leaves(parser: argparse.ArgumentParser, path: tuple[str, ...] = ()
            ) -> Iterator[tuple[tuple[str, ...], argparse.ArgumentParser]]:
    """Every parser that runs a command: (its path of subcommand names, the parser)."""
    subs = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    if not subs or not subs[0].required:
        yield path, parser
    for action in subs:
        for name, sub in action.choices.items():
            yield from _leaves(sub, (*path, name))


def _key(path: tuple[str, ...]) -> tuple[str | None, str | None]:
    return (path[0] if path else None, path[1] if len(path) > 1 else None)


def _own_actions(parser: argparse.ArgumentParser) -> list[argparse.Action]:
    skip = {"help", "version", *SELECTORS}
    return [a for a in parser._actions
            if a.dest not in skip and not isinstance(a, argparse._SubParsersAction)]


def _flat_fields(cls: type[Any]) -> set[str]:
    """A record's field names, a nested record's fields counted as its own."""
    hints = get_type_hints(cls)
    out: set[str] = set()
    for f in dataclasses.fields(cls):
        kind = hints[f.name]
        out |= _flat_fields(kind) if dataclasses.is_dataclass(kind) else {f.name}
    return out


def _record(key: tuple[str | None, str | None]) -> type[Any]:
    return getattr(opts, COMMANDS[key][1])


LEAVES = dict(_leaves(build_parser()))


def test_every_command_of_the_parser_is_dispatched_and_no_other():
    assert {_key(p) for p in LEAVES} == set(COMMANDS)


@pytest.mark.parametrize("path", sorted(LEAVES), ids=lambda p: " ".join(p) or "(bare)")
def test_the_record_has_a_field_for_each_destination_and_no_other(path):
    key = _key(path)
    dests = {a.dest for a in _own_actions(LEAVES[path])}
    fields = _flat_fields(_record(key)) - NOT_OFFERED.get(key, set())
    assert dests == fields


@pytest.mark.parametrize("path", sorted(LEAVES), ids=lambda p: " ".join(p) or "(bare)")
def test_the_parser_declares_no_default_of_its_own(path):
    """A left-out option arrives as None (False for a flag) and takes the record's default."""
    declared = {a.dest: a.default for a in _own_actions(LEAVES[path])
                if a.default not in (None, False)}
    assert declared == {}


def test_every_record_is_frozen():
    for key in COMMANDS:
        cls = _record(key)
        assert cls.__dataclass_params__.frozen, cls.__name__
    assert ChartOverrides.__dataclass_params__.frozen


def _help(path: tuple[str, ...], option: str) -> str:
    (action,) = [a for a in LEAVES[path]._actions if option in a.option_strings]
    return str(action.help)


def _stated_default(text: str) -> str:
    found = re.search(r"default:? (\S+?)[;)]", text)
    assert found, text
    return found.group(1)


@pytest.mark.parametrize(
    ("path", "option", "record", "name"),
    [(("simulate",), "--rate", opts.SimulateOptions, "rate"),
     (("simulate",), "--speed", opts.SimulateOptions, "speed"),
     (("simulate",), "--seed", opts.SimulateOptions, "seed"),
     (("demo",), "--seed", opts.DemoOptions, "seed"),
     (("demo",), "--speed", opts.DemoOptions, "speed"),
     (("watch",), "--clear-after", CharacteristicConfig, "clear_after")],
)
def test_a_default_the_help_states_is_the_real_one(path, option, record, name):
    assert float(_stated_default(_help(path, option))) == field_default(record, name)


def test_durations_the_help_states_are_the_real_defaults():
    from linewatch.cli.commands.report import DEFAULT_SPAN

    since = _stated_default(_help(("report",), "--since"))
    assert parse_duration(since) == parse_duration(DEFAULT_SPAN)
    shelve = _help(("alarms", "shelve"), "--for")
    assert parse_duration(_stated_default(shelve)) == DEFAULT_SHELVE_MAX


def _options(*argv: str) -> Any:
    return options_from(build_parser().parse_args(list(argv)))


def test_the_dispatcher_builds_typed_records_with_the_records_defaults():
    assert _options("watch") == opts.WatchOptions()
    assert _options() == opts.DefaultOptions()
    assert _options("demo") == opts.DemoOptions()
    assert _options("simulate", "--out", "x") == opts.SimulateOptions(out="x")
    assert _options("alarms", "list") == opts.AlarmListOptions()
    assert _options("audit", "export").format == "jsonl"
    assert _options("report").format == "markdown"


def test_every_chart_option_reaches_the_overrides():
    got = _options("check", "a.csv", "b.csv", "--column", "od", "--column", "wall",
                   "--rules", "nelson", "--center", "10", "--sigma", "0.5", "--baseline", "30",
                   "--subgroup-size", "5", "--dispersion", "stdev", "--lsl", "9", "--usl", "11",
                   "--decimal", ",", "--format", "jsonl", "-c", "line.toml")
    assert got == opts.CheckOptions(
        logs=("a.csv", "b.csv"), config="line.toml", format="jsonl",
        chart=ChartOverrides(columns=("od", "wall"), rules="nelson", center=10.0, sigma=0.5,
                             baseline=30, subgroup_size=5, dispersion="stdev", lsl=9.0,
                             usl=11.0, decimal=","))
    watch = _options("watch", "--clear-after", "3", "--no-ui", "--poll", "2", "x.csv")
    assert watch.chart.clear_after == 3 and watch.no_ui and watch.poll == 2.0
    assert watch.patterns == ("x.csv",)


def test_ids_and_repeated_options_arrive_as_tuples():
    ack = _options("alarms", "ack", "3", "5", "--reason", "tool wear")
    assert ack == opts.AckOptions(ids=(3, 5), reason="tool wear")
    verify = _options("audit", "verify", "--anchor", "a.log", "--anchor", "b.md")
    assert verify.anchor == ("a.log", "b.md")


def test_inconsistent_chart_options_are_refused_when_the_record_is_made():
    with pytest.raises(Exception, match="--center and --sigma go together"):
        _options("check", "a.csv", "--center", "10")


def test_the_bare_command_hands_watch_the_config_here(tmp_path, monkeypatch):
    from linewatch.cli.commands import default, watch

    (tmp_path / "linewatch.toml").write_text("")
    monkeypatch.chdir(tmp_path)
    seen: list[opts.WatchOptions] = []
    monkeypatch.setattr(watch, "run", lambda options, title="": seen.append(options) or 0)
    assert default.run(opts.DefaultOptions()) == 0
    assert seen == [opts.WatchOptions(config="linewatch.toml")]


def test_the_demo_hands_watch_its_folder_and_removes_it(monkeypatch):
    from linewatch.cli.commands import demo, watch

    seen: list[tuple[opts.WatchOptions, str, bool]] = []

    def fake_watch(options: opts.WatchOptions, title: str = "") -> int:
        seen.append((options, title, Path(options.config or "").is_file()))
        return 0

    monkeypatch.setattr(watch, "run", fake_watch)
    saved = {sig: signal.getsignal(sig) for sig in (signal.SIGHUP, signal.SIGTERM)}
    try:
        assert demo.run(opts.DemoOptions(seed=3)) == 0
    finally:
        for sig, handler in saved.items():
            signal.signal(sig, handler)
    ((options, title, config_was_there),) = seen
    folder = Path(options.config or "").parent
    assert config_was_there and options.state_dir == str(folder / "state")
    assert title == "demo extrusion line"
    assert options == opts.WatchOptions(config=options.config, state_dir=options.state_dir)
    assert not folder.exists()  # removed on the way out (no --keep)


@pytest.mark.parametrize(
    ("record", "given", "words"),
    [(opts.SimulateOptions, {"out": "x", "rate": 0.0}, "--rate must be more than 0 rows"),
     (opts.SimulateOptions, {"out": "x", "rate": float("nan")}, "--rate must be a finite"),
     (opts.SimulateOptions, {"out": "x", "speed": float("inf")}, "--speed must be a finite"),
     (opts.SimulateOptions, {"out": "x", "seed": -1}, "--seed must be 0 or more"),
     (opts.DemoOptions, {"speed": 0.0}, "--speed must be more than 0"),
     (opts.DemoOptions, {"seed": -3}, "--seed must be 0 or more"),
     (opts.WatchOptions, {"poll": -1.0}, "--poll must be 0 or more seconds"),
     (opts.WatchOptions, {"poll": float("nan")}, "--poll must be 0 or more seconds")],
)
def test_a_record_refuses_impossible_numbers_whoever_makes_it(record, given, words):
    from linewatch.domain.errors import LinewatchError

    with pytest.raises(LinewatchError, match=re.escape(words)):
        record(**given)
    assert record(**{**given, **{k: 1 for k in given if k != "out"}})  # 1 of each is fine


def test_a_negative_seed_is_one_line_and_exit_2_not_a_traceback(tmp_path):
    import subprocess
    import sys

    res = subprocess.run([sys.executable, "-m", "linewatch", "simulate", "--out",
                          str(tmp_path / "line"), "--seed", "-1"],
                         capture_output=True, text=True, timeout=60)
    assert res.returncode == 2
    assert res.stderr.splitlines() == ["linewatch: --seed must be 0 or more, got -1"]
    assert not (tmp_path / "line").exists()  # refused before anything was written
