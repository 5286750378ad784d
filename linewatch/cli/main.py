"""Command line: the argument parser and the dispatcher. The parsed arguments become the
command's typed options (`cli.options`) here and nowhere else; each subcommand's work lives in
`linewatch.cli.commands.*`, imported lazily so that `linewatch --help` and `linewatch check`
start quickly. The parser declares no defaults: the options records do."""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence
from typing import Any

from linewatch.config.choices import (
    ATTRIBUTE_CHART_NAMES,
    CHECK_FORMATS,
    DECIMAL_MARKS,
    DISPERSIONS,
    EXPORT_FORMATS,
    PHASE_LIMITS,
    RECORD_FORMATS,
    REPORT_FORMATS,
)
from linewatch.domain import exit_codes


def _add_chart_options(p: argparse.ArgumentParser) -> None:
    """Options shared by `check` and `watch`: what to chart and how."""
    p.add_argument("-c", "--config", metavar="CONFIG", help="TOML file declaring characteristics")
    p.add_argument(
        "--column",
        action="append",
        dest="columns",
        metavar="NAME",
        help="characteristic column to chart (repeatable; default: every numeric column)",
    )
    p.add_argument(
        "--rules",
        metavar="LIST",
        help="rule ids and set names, comma-separated: nelson, western-electric, n1..n8, "
        "we1..we4, and the detectors ewma, cusum (default: western-electric)",
    )
    _add_detector_options(p)
    p.add_argument("--center", type=float, metavar="C", help="known process centre (with --sigma)")
    p.add_argument(
        "--sigma", type=float, metavar="S", help="known standard deviation of individual values"
    )
    p.add_argument(
        "--baseline",
        type=int,
        metavar="N",
        help="estimate limits from the first N plotted points",
    )
    ways = p.add_mutually_exclusive_group()
    ways.add_argument(
        "--subgroup-size", type=int, metavar="N",
        help="consecutive data rows per subgroup (1-25; more for --result; a rejected row "
        "leaves its subgroup one value short)"
    )
    ways.add_argument("--subgroup-by", metavar="COLUMN",
                      help="consecutive rows with one value of COLUMN (a sample id) form a "
                      "subgroup")
    ways.add_argument("--subgroup-window", metavar="DURATION",
                      help="rows whose time stamp falls in one clock window (e.g. 15m, 1h) "
                      "form a subgroup")
    p.add_argument("--count", dest="count_column", metavar="COLUMN",
                   help="attribute data: nonconforming units or defects per row")
    p.add_argument("--size", dest="size_column", metavar="COLUMN",
                   help="units inspected per row (with --count)")
    p.add_argument("--result", dest="result_column", metavar="COLUMN",
                   help="attribute data: one part's pass/fail result per row")
    p.add_argument("--fail", dest="fail_values", metavar="VALUE[,VALUE...]",
                   help="results that mean a failed part (default FAIL,NG,NOK,0,false; "
                   "any case)")
    p.add_argument("--pass", dest="pass_values", metavar="VALUE[,VALUE...]",
                   help="results that mean a good part (default PASS,OK,GO,1,true; any case); "
                   "any other result is a rejected row")
    p.add_argument("--chart", dest="attribute_chart", choices=ATTRIBUTE_CHART_NAMES,
                   help="attribute chart (default: p for results and for counts with "
                   "--size, c for counts without)")
    p.add_argument(
        "--dispersion",
        choices=DISPERSIONS,
        help="dispersion chart for subgroups (default: range for n<=9, stdev for n>=10)",
    )
    p.add_argument("--lsl", type=float, metavar="X", help="lower specification limit")
    p.add_argument("--usl", type=float, metavar="X", help="upper specification limit")
    p.add_argument(
        "--decimal",
        choices=DECIMAL_MARKS,
        help="decimal mark (default: ',' when the delimiter is ';', else '.')",
    )


def _add_detector_options(p: argparse.ArgumentParser) -> None:
    """The EWMA and CUSUM parameters (used when --rules or the config names the detector)."""
    g = p.add_argument_group("detectors (with --rules ...,ewma,cusum)")
    g.add_argument("--ewma-lambda", type=float, metavar="LAMBDA",
                   help="EWMA smoothing weight, 0.01-1 (default 0.2)")
    g.add_argument("--ewma-width", type=float, metavar="L",
                   help="EWMA limit width in σ of its own spread (default 2.962)")
    g.add_argument("--cusum-k", type=float, metavar="K",
                   help="CUSUM reference value in σ of the plotted points (default 0.5)")
    g.add_argument("--cusum-h", type=float, metavar="H",
                   help="CUSUM decision interval in σ of the plotted points (default 5)")
    g.add_argument("--cusum-headstart", type=float, metavar="S",
                   help="CUSUM head start at each phase's start, below H (default 0; H/2 "
                   "gives a fast initial response)")


def _add_investigation_options(p: argparse.ArgumentParser) -> None:
    """`check`'s phases, comparisons and regression on a setting."""
    g = p.add_argument_group("phases and settings")
    g.add_argument("--phase-by", metavar="COLUMN",
                   help="start a new phase at every change of this column (a lot, die, shift)")
    g.add_argument("--phase-at", metavar="POINT[,POINT...]",
                   help="start new phases at these plotted points (as the signal list numbers "
                        "them)")
    g.add_argument("--limits", choices=PHASE_LIMITS,
                   help="each phase its own Phase I limits (per-phase, default) or the first "
                        "phase's carried over (first)")
    g.add_argument("--practical-share", dest="practical_percent", type=float, metavar="PERCENT",
                   help="a change of the mean this share of the tolerance or more counts as "
                        "large enough to matter (default 10; our convention)")
    g.add_argument("--versus", metavar="COLUMN",
                   help="regress the characteristic on this setting column of the same log")
    g.add_argument("--at", type=float, metavar="X", help="predict the characteristic at setting X")
    g.add_argument("--target", type=float, metavar="Y",
                   help="name the setting that puts the mean on Y (default: the config's target)")
    g.add_argument("--degree", type=int, choices=(1, 2), help="1: a line (default); 2: quadratic")


def _add_state_dir(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--state-dir",
        metavar="DIR",
        help="folder of the alarm and ingest store (default: per config, in the user state dir)",
    )
    p.add_argument("-c", "--config", metavar="CONFIG", help="config whose state directory to use")


def build_parser() -> argparse.ArgumentParser:
    """The full argument parser (cheap to build: no heavy imports)."""
    parser = argparse.ArgumentParser(
        prog="linewatch",
        description="Watch measurement logs beside a production line: control charts, "
        "Western Electric and Nelson run rules, capability, alarms with acknowledgement. "
        "Run without a subcommand to open ./linewatch.toml.",
    )
    from linewatch import __version__

    parser.add_argument("--version", action="version", version=f"linewatch {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser(
        "check",
        help="chart a finished log and report signals, limits and capability",
        description="Read whole logs, estimate limits (Phase I) or use known ones, apply the run "
        "rules and summarise. Exit 0: no signal, 1: signals, 2: usage or input error.",
    )
    p.add_argument("logs", nargs="*", metavar="LOG", help="CSV or JSON-lines file; - for stdin")
    _add_chart_options(p)
    p.add_argument("--format", choices=CHECK_FORMATS,
                   help="text for people (default), one JSON record a line, or the analysis "
                        "page as one HTML or Markdown file")
    p.add_argument("-o", "--output", metavar="FILE", help="write here instead of stdout")
    _add_investigation_options(p)
    p.add_argument("--points", action="store_true",
                   help="with --format jsonl: also one record per plotted point, with its "
                   "subgroup size and limits")
    p.add_argument("--compare-rules", metavar="SET[;SET...]",
                   help="print the detection power of several rule sets side by side and read "
                   "no log (quote it: 'western-electric;we1,ewma;we1,cusum')")

    p = sub.add_parser(
        "watch",
        help="follow growing logs live (screen, or --no-ui for plain output)",
        description="Follow appended logs through rotation and truncation, apply the run rules as "
        "rows arrive, and raise alarms. PATTERN may be a quoted glob; new matching files are "
        "picked up.",
    )
    p.add_argument("patterns", nargs="*", metavar="PATTERN", help="file or quoted glob")
    _add_chart_options(p)
    p.add_argument("--state-dir", metavar="DIR", help="folder of the ingest and alarm store")
    p.add_argument(
        "--poll",
        type=float,
        metavar="SECONDS",
        help="poll files every SECONDS instead of waiting for file-system events (network shares)",
    )
    p.add_argument(
        "--no-ui", action="store_true", help="print events instead of opening the screen"
    )
    p.add_argument("--format", choices=RECORD_FORMATS,
                   help="text for people (default) or one JSON record a line")
    p.add_argument("--no-bell", action="store_true", help="no terminal bell on new alarms")
    p.add_argument("--clear-after", type=int, metavar="N",
                   help="quiet plotted points after which an alarm episode returns to normal "
                        "(default 8; 1: at the first quiet point)")

    alarms = sub.add_parser("alarms", help="list, acknowledge and shelve alarms from the shell")
    asub = alarms.add_subparsers(dest="alarms_command", metavar="ACTION", required=True)
    a = asub.add_parser("list", help="open alarms (all with --all)")
    a.add_argument("--all", action="store_true", help="include closed alarms")
    a.add_argument("--format", choices=RECORD_FORMATS,
                   help="a table for people (default) or one JSON record a line")
    _add_state_dir(a)
    a = asub.add_parser("ack", help="acknowledge alarms with a reason")
    a.add_argument("ids", nargs="*", type=int, metavar="ID")
    a.add_argument(
        "--characteristic", metavar="NAME", help="every open alarm of this characteristic"
    )
    a.add_argument("--reason", required=True, metavar="TEXT",
                   help="why it happened: one of the reasons, or its number in the list")
    a.add_argument("--note", metavar="TEXT",
                   help="what was seen or done (optional)")
    _add_state_dir(a)
    a = asub.add_parser(
        "shelve", help="take an alarm out of annunciation for a while (still counted and audited)"
    )
    a.add_argument("id", type=int, nargs="?", metavar="ID")
    a.add_argument("--characteristic", metavar="NAME",
                   help="every alarm of this characteristic, and those it raises meanwhile")
    a.add_argument("--for", dest="duration", required=True, metavar="DURATION",
                   help="with a unit, e.g. 30m, 2h (at most alarms.shelve_max, default 12h)")
    a.add_argument("--reason", required=True, metavar="TEXT", help="why it is shelved (required)")
    _add_state_dir(a)
    a = asub.add_parser("unshelve", help="bring a shelved alarm back")
    a.add_argument("id", type=int, metavar="ID")
    _add_state_dir(a)

    p = sub.add_parser(
        "baseline", help="start a new phase of limits from a point (carried out by the collector)"
    )
    p.add_argument("characteristic", metavar="CHARACTERISTIC")
    at = p.add_mutually_exclusive_group(required=True)
    at.add_argument("--at", type=int, metavar="INDEX", help="the plotted point the phase starts at")
    at.add_argument("--now", action="store_true", help="from the next plotted point on")
    p.add_argument("--reason", required=True, metavar="TEXT", help="why (kept in the audit trail)")
    _add_state_dir(p)

    audit = sub.add_parser("audit", help="verify or export the tamper-evident audit trail")
    usub = audit.add_subparsers(dest="audit_command", metavar="ACTION", required=True)
    u = usub.add_parser("verify", help="check the hash chain; name the first broken entry")
    u.add_argument("--anchor", action="append", metavar="FILE",
                   help="an anchor file or a shift report holding the trail's head, to check "
                        "the trail still holds what it held then (repeatable; the config's "
                        "monitor.audit_anchor_file is always read too)")
    u.add_argument("--key", metavar="FILE",
                   help="the audit key file, to check the entries signed with it (default: "
                        "the config's monitor.audit_key_file)")
    u.add_argument("--plant", metavar="URL",
                   help="verify the chain a line forwarded to this central database (with "
                        "--line; the URL's password is never printed)")
    u.add_argument("--line", metavar="NAME", help="the line's name in the central database")
    _add_state_dir(u)
    u = usub.add_parser("export", help="write the audit trail as CSV or JSON lines")
    u.add_argument("--since", metavar="WHEN", help="a duration (8h) or an ISO date/time")
    u.add_argument("--format", choices=EXPORT_FORMATS,
                   help="JSON lines (default) or CSV")
    _add_state_dir(u)

    p = sub.add_parser("report", help="shift handover report from the store")
    when = p.add_mutually_exclusive_group()
    when.add_argument("--since", metavar="DURATION", help="the last DURATION (default 8h)")
    when.add_argument("--from", dest="from_", metavar="WHEN", help="start (ISO date/time)")
    p.add_argument("--to", metavar="WHEN", help="end (ISO date/time; default now)")
    p.add_argument("--format", choices=REPORT_FORMATS,
                   help="Markdown (default), one HTML file with charts, or CSV")
    p.add_argument("-o", "--output", metavar="FILE", help="write here instead of stdout")
    _add_state_dir(p)

    _add_plant(sub)

    p = sub.add_parser("simulate", help="write invented measurement logs with special causes")
    p.add_argument("--out", required=True, metavar="DIR",
                   help="folder for the logs (made if missing; logs already there are continued)")
    p.add_argument("--rate", type=float, metavar="ROWS_PER_S",
                   help="rows per second of the fastest gauge (default 5)")
    p.add_argument("--speed", type=float, metavar="FACTOR",
                   help="run the line's clock this many times faster than real time (default 1)")
    p.add_argument("--seed", type=int, metavar="N",
                   help="random seed: the same seed writes the same values (default 1)")
    p.add_argument("--duration", metavar="DURATION", help="stop after this long (default: forever)")

    p = sub.add_parser("demo", help="open the screen on a simulated line (no setup needed)")
    p.add_argument("--keep", action="store_true", help="keep the temporary folder on exit")
    p.add_argument("--seed", type=int, metavar="N",
                   help="random seed of the simulated line (default 1)")
    p.add_argument("--speed", type=float, metavar="FACTOR",
                   help="run the simulated line this many times faster than real time (default 1)")
    _add_serving(sub)
    return parser


def _add_serving(sub: Any) -> None:
    """`serve` and `browser-user`: the screens in a browser, and who may sign in there."""
    p = sub.add_parser(
        "serve", help="serve the screens to browsers (read-only unless --allow-actions)",
        description="Serve the line's screen (or the plant board) to web browsers, one screen "
        "per browser. Localhost only by default; put it behind the plant's HTTPS reverse "
        "proxy to reach it from elsewhere (see the README).")
    which = p.add_mutually_exclusive_group(required=True)
    which.add_argument("-c", "--config", metavar="CONFIG", help="the line's config")
    which.add_argument("--plant", metavar="URL", nargs="?", const="",
                       help="the plant board over this central database (without URL: "
                            "LINEWATCH_PLANT_URL, which keeps the password out of `ps`)")
    p.add_argument("--state-dir", metavar="DIR", help="folder of the line's store")
    p.add_argument("--bind", metavar="HOST:PORT", help="address to listen on (default "
                   "127.0.0.1:8765)")
    p.add_argument("--users", metavar="FILE",
                   help="sign-in required: the user file made by `linewatch browser-user add`")
    p.add_argument("--allow-actions", action="store_true",
                   help="let signed-in users acknowledge, shelve and ask for new baselines "
                        "(needs --users; each action is audited with the user and address)")
    p.add_argument("--public-url", metavar="URL",
                   help="the address browsers use, when behind a reverse proxy "
                        "(https://... makes the session cookie secure-only)")
    p.add_argument("--trust-forwarded", action="store_true",
                   help="take the browser's address from the proxy's X-Forwarded-For (only "
                        "behind a proxy that sets it)")

    bu = sub.add_parser("browser-user", help="who may sign in to `linewatch serve`")
    bsub = bu.add_subparsers(dest="browser_user_command", metavar="ACTION", required=True)
    for action, words in (("add", "add a user or give one a new password"),
                          ("remove", "take a user off the list")):
        b = bsub.add_parser(action, help=words)
        b.add_argument("name", metavar="NAME")
        b.add_argument("--users", required=True, metavar="FILE", help="the user file")
        if action == "add":
            b.add_argument("--password-stdin", action="store_true",
                           help="read the password from the first line of stdin (scripts)")
    b = bsub.add_parser("list", help="the names on the list")
    b.add_argument("--users", required=True, metavar="FILE", help="the user file")


def _add_plant(sub: Any) -> None:
    """`linewatch plant ...`: the central database every line forwards to."""
    plant = sub.add_parser("plant", help="the plant's central database (PostgreSQL)")
    psub = plant.add_subparsers(dest="plant_command", metavar="ACTION", required=True)
    p = psub.add_parser(
        "init", help="create or bring forward the central database's tables (idempotent)",
        description="Create the linewatch schema in a PostgreSQL database, or apply the "
        "migrations it lacks. Safe to run again and from several places at once.")
    p.add_argument("url", nargs="?", metavar="URL",
                   help="postgresql://USER@HOST/DB (default: LINEWATCH_PLANT_URL; a password "
                        "is better kept in ~/.pgpass or PGPASSWORD)")
    p = psub.add_parser(
        "board", help="every line at a glance, from the central database",
        description="One row per line: state, alarms waiting by priority, the most urgent "
        "one, flood, stale feeds, the link and the age of the newest data.")
    p.add_argument("--url", metavar="URL", help="the central database (default: "
                   "LINEWATCH_PLANT_URL)")
    p.add_argument("--no-ui", action="store_true", help="print the lines once and exit")
    p.add_argument("--format", choices=RECORD_FORMATS,
                   help="text for people (default) or one JSON record a line")


# (command, action) -> (the module whose run() does it, the name of its options record)
COMMANDS: dict[tuple[str | None, str | None], tuple[str, str]] = {
    (None, None): ("linewatch.cli.commands.default", "DefaultOptions"),
    ("check", None): ("linewatch.cli.commands.check", "CheckOptions"),
    ("watch", None): ("linewatch.cli.commands.watch", "WatchOptions"),
    ("alarms", "list"): ("linewatch.cli.commands.alarms", "AlarmListOptions"),
    ("alarms", "ack"): ("linewatch.cli.commands.alarms", "AckOptions"),
    ("alarms", "shelve"): ("linewatch.cli.commands.alarms", "ShelveOptions"),
    ("alarms", "unshelve"): ("linewatch.cli.commands.alarms", "UnshelveOptions"),
    ("baseline", None): ("linewatch.cli.commands.baseline", "BaselineOptions"),
    ("audit", "verify"): ("linewatch.cli.commands.audit", "VerifyOptions"),
    ("audit", "export"): ("linewatch.cli.commands.audit", "ExportOptions"),
    ("report", None): ("linewatch.cli.commands.report", "ReportOptions"),
    ("plant", "init"): ("linewatch.cli.commands.plant_init", "PlantInitOptions"),
    ("plant", "board"): ("linewatch.cli.commands.plant_board", "PlantBoardOptions"),
    ("simulate", None): ("linewatch.cli.commands.simulate", "SimulateOptions"),
    ("demo", None): ("linewatch.cli.commands.demo", "DemoOptions"),
    ("serve", None): ("linewatch.cli.commands.serve", "ServeOptions"),
    ("browser-user", "add"): ("linewatch.cli.commands.browser_user", "BrowserUserAddOptions"),
    ("browser-user", "remove"): ("linewatch.cli.commands.browser_user",
                                 "BrowserUserRemoveOptions"),
    ("browser-user", "list"): ("linewatch.cli.commands.browser_user", "BrowserUserListOptions"),
}
# which command, not its options
SELECTORS = ("command", "alarms_command", "audit_command", "plant_command",
             "browser_user_command")


def command_of(args: argparse.Namespace) -> tuple[str | None, str | None]:
    """The (command, action) the parsed arguments chose."""
    command = args.command
    action = getattr(args, f"{command.replace('-', '_')}_command", None) if command else None
    return command, action


def options_from(args: argparse.Namespace) -> Any:
    """The chosen command's options record, built from the parsed arguments: a destination
    left at None (not given) takes the record's default; lists become tuples; a nested record
    (the chart overrides) is filled from the same destinations."""
    from linewatch.cli import options

    _module, record = COMMANDS[command_of(args)]
    return build_record(getattr(options, record), vars(args))


def build_record(cls: type[Any], given: dict[str, Any]) -> Any:
    """`cls` made from the parsed values in `given` by field name (see `options_from`)."""
    import dataclasses
    from typing import get_type_hints

    hints = get_type_hints(cls)
    values: dict[str, Any] = {}
    for f in dataclasses.fields(cls):
        kind = hints[f.name]
        if isinstance(kind, type) and dataclasses.is_dataclass(kind):
            values[f.name] = build_record(kind, given)
            continue
        value = given.get(f.name)
        if value is not None:
            values[f.name] = tuple(value) if isinstance(value, list) else value
    return cls(**values)


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point: parse, dispatch lazily, turn user errors into one line and exit code 2.

    Everything the commands (and argparse) print passes through the one sanitiser of
    `linewatch.domain.safe_text`, so text from a log, a file name or a config cannot steer the
    terminal; the screen draws through its own handle and escapes what it shows itself.
    """
    from linewatch.domain.safe_text import guarded_output

    with guarded_output():
        try:
            return _main(argv)
        except Exception:  # a bug: its traceback may quote a name or a file, so print it here
            import traceback

            traceback.print_exc()
            return exit_codes.SIGNALS  # the interpreter's own code for an uncaught exception


def _main(argv: Sequence[str] | None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        options = options_from(args)  # chart options are checked here, before any file is read
        module = importlib.import_module(COMMANDS[command_of(args)][0])
        return int(module.run(options) or 0)
    except (Exception, KeyboardInterrupt) as exc:
        code, line = exit_code_for(exc)
        if line is not None:
            print(f"linewatch: {line}", file=sys.stderr)
        return code


def exit_code_for(exc: BaseException) -> tuple[int, str | None]:
    """The one mapping from what reached the command line to an exit code and the line to show
    (None: nothing to say). An exception that is none of these is a bug and is raised again."""
    from linewatch.domain.errors import LinewatchError
    from linewatch.domain.safe_text import visible

    if isinstance(exc, LinewatchError):
        return exit_codes.USAGE, visible(exc)
    if isinstance(exc, KeyboardInterrupt):
        return exit_codes.INTERRUPTED, None
    if isinstance(exc, BrokenPipeError):
        return exit_codes.OK, None
    damage = _store_damage(exc)
    if damage is None:
        raise exc
    return exit_codes.USAGE, damage


def _store_damage(exc: BaseException) -> str | None:
    """One line for a store file damaged or replaced while linewatch had it open (SQLite's
    "file is not a database", "disk image is malformed"), or None for any other error. Full
    disks and locks are OperationalErrors: those are retried where they happen, not here."""
    import sqlite3

    if not isinstance(exc, sqlite3.DatabaseError) or isinstance(exc, sqlite3.OperationalError):
        return None
    return (
        f"the store's database file is damaged or was replaced while in use ({exc}); "
        "nothing more was collected. Keep the damaged state directory for inspection, "
        "move it aside, and start again: the logs are read afresh"
    )

if __name__ == "__main__":
    raise SystemExit(main())
