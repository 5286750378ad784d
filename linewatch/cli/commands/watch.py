"""`linewatch watch`: follow growing logs; the screen, or plain records with --no-ui."""

from __future__ import annotations

import functools
import signal
import sys
import threading
from collections import deque
from pathlib import Path
from types import FrameType
from typing import TYPE_CHECKING, Any

from linewatch.cli.options import WatchOptions
from linewatch.config.model import CharacteristicConfig, Config, FeedConfig
from linewatch.config.selection import (
    JSON_SUFFIXES,
    apply_overrides,
    load_optional_config,
    select_characteristics,
)
from linewatch.domain.errors import LinewatchError

if TYPE_CHECKING:
    from linewatch.pipeline.monitor import Monitor
    from linewatch.pipeline.plan import WatchPlan
    from linewatch.present.face import MonitorFace
    from linewatch.present.view import LineActions


def _refuse_what_watch_cannot_chart(chars: list[CharacteristicConfig],
                                    feeds: list[FeedConfig]) -> None:
    """Sample ids and pass/fail results are text columns, which a live tail keeps for
    delimited logs with a header (wide layout) only: say so rather than chart nothing."""
    texts = [c for c in chars if c.subgroup_by or c.result_column]
    other = [f.layout for f in feeds if f.layout != "wide"]
    if texts and other:
        raise LinewatchError(
            f"{texts[0].name}: watch reads sample ids and pass/fail results from delimited "
            f"logs with a header (layout wide), not from {other[0]} feeds; `linewatch check` "
            "reads finished logs of other layouts")


def build_plan(options: WatchOptions, config: Config) -> WatchPlan:
    """Feeds and characteristics from the config and the command line."""
    from linewatch.pipeline.plan import WatchPlan

    chart = options.chart
    feeds: list[FeedConfig] = [f for f in config.feeds]
    if options.patterns:
        base = feeds[0] if feeds else FeedConfig(paths=[])
        if not feeds and all(p.lower().endswith(JSON_SUFFIXES) for p in options.patterns):
            base = FeedConfig(paths=[], layout="jsonl")
        extra = FeedConfig(
            paths=[str(Path(p).expanduser()) for p in options.patterns], layout=base.layout,
            delimiter=base.delimiter, decimal=chart.decimal or base.decimal,
            encoding=base.encoding, time_column=base.time_column, name_column=base.name_column,
            value_column=base.value_column,
        )
        feeds = [extra] if not config.feeds else [*feeds, extra]
    if not feeds:
        raise LinewatchError(
            "nothing to watch: name a file or a quoted glob, or a config with [[feed]] entries"
        )
    chars = select_characteristics(config, chart, None) if (
        chart.columns or chart.count_column or chart.result_column or config.characteristics
    ) else []
    _refuse_what_watch_cannot_chart(chars, feeds)
    from linewatch.pipeline.stepped_rows import columns_read

    reads = [columns_read(c) for c in chars]
    columns = list(dict.fromkeys(n for numeric, _ in reads for n in numeric)) if chars else None
    texts = list(dict.fromkeys(t for _, text in reads for t in text))
    baseline = chart.baseline or config.monitor.baseline
    asked = [c.column for c in chars] if chart.columns else None
    return WatchPlan(config=config, feeds=feeds, characteristics=chars, columns=columns,
                     baseline=baseline,
                     overrides=functools.partial(apply_overrides, overrides=chart),
                     asked=asked, text_columns=texts)


def run(options: WatchOptions, title: str = "") -> int:
    """Follow the logs until stopped; `title` names the screen (the demo's line)."""
    config = load_optional_config(options.config)
    plan = build_plan(options, config)
    plan.title = title
    from linewatch.runtime.statedir import resolve_state_dir

    state_dir = resolve_state_dir(options.state_dir, config)
    if options.no_ui:
        return run_headless(plan, state_dir, options.format, options.poll)
    return run_screen(plan, state_dir, options.poll,
                      bell=config.monitor.bell and not options.no_bell)


def run_headless(plan: WatchPlan, state_dir: Path, fmt: str, poll: float | None) -> int:
    """Collect (or view) until SIGTERM/SIGINT/SIGHUP, then print one summary per
    characteristic."""
    from linewatch.faces.headless import Printer
    from linewatch.pipeline.monitor import Monitor

    printer = Printer(fmt)
    monitor = Monitor(plan, state_dir, emit=printer, poll_seconds=poll)
    stop = threading.Event()

    def _stop(signum: int, frame: FrameType | None) -> None:
        stop.set()

    # a dropped SSH session (SIGHUP) ends it like SIGTERM: the pass is finished and the
    # collector's lease given up at once, so another instance takes over without waiting
    for sig in (signal.SIGTERM, signal.SIGINT, signal.SIGHUP):
        signal.signal(sig, _stop)
    monitor.run(stop)
    for record in summaries(monitor):
        printer(record)
    return 0


def summaries(monitor: Monitor) -> list[dict[str, Any]]:
    """`summary` records per characteristic. `points` and the figures cover the readings the
    store holds for it (up to the newest 100,000), whichever instance read them, so they agree
    after a restart or a takeover; `read` is how many this instance read, `rejected` how many
    rows it rejected."""
    from linewatch.engine.charts import chart_names
    from linewatch.engine.summary import summarize
    from linewatch.runtime.statedir import open_store

    out: list[dict[str, Any]] = []
    store = open_store(monitor.state_dir, create=True)
    try:
        for name, c in monitor.char_configs.items():
            recs = store.history.last_points(name, 100_000)
            values = [r.value for r in recs]
            limits = store.history.current_limits(name)
            loc = limits.get(chart_names(c.subgroup_size, c.effective_dispersion)[0])
            sigma = loc.sigma * (c.subgroup_size ** 0.5) if loc else None
            s = summarize(values, sigma_within=sigma, lsl=c.lsl, usl=c.usl).to_dict()
            rec = {"type": "summary", "characteristic": name, "points": len(values),
                   "read": monitor.counts.get(name, 0), "rejected": monitor.rejected}
            rec.update({k: v for k, v in s.items() if k != "points"})
            if c.is_attribute:  # a mean of 0/1 results is no figure to show: p̄ or ū is
                from linewatch.present.attribute_figures import (
                    attribute_capability,
                    capability_record,
                )

                cap = attribute_capability(store, c)
                for key in ("mean", "stdev", "cp", "cpk", "pp", "ppk"):
                    rec.pop(key, None)
                if cap is not None:
                    rec["attribute"] = capability_record(cap)
            out.append(rec)
    finally:
        store.close()
    return out


HANGUP_GRACE = 5.0  # seconds the screen's normal way out may take after a hang-up
HOOK_PROBLEMS_KEPT = 20  # alarm-hook problems told on stderr when the screen closes


class HookProblems:
    """The `emit` of the screen's monitor: the screen shows everything from the store, so of
    the records only the last few alarm-hook problems are kept, to say on leaving (keeping
    every record would grow all shift)."""

    def __init__(self, keep: int = HOOK_PROBLEMS_KEPT) -> None:
        self.kept: deque[dict[str, Any]] = deque(maxlen=keep)

    def __call__(self, record: dict[str, Any]) -> None:
        if record.get("type") == "hook" and "problem" in record:
            self.kept.append(record)


def browser_face(monitor: Monitor) -> tuple[MonitorFace, LineActions, str]:
    """The screen's source, actions and title: in a browser served by `linewatch serve`, the
    signed-in user acts (audited with the browser's address) or every action is refused."""
    from linewatch.present.browser_session import READ_ONLY_TITLE, ReadOnlyActions, browser_session
    from linewatch.present.face import MonitorFace
    from linewatch.store.actor import Actor

    session = browser_session()
    if session is None:
        face = MonitorFace(monitor)
        return face, face, monitor.title
    # the screen's top line says whose view it is (the plan's title names the line there)
    name = monitor.title.removeprefix("linewatch · ").removeprefix("linewatch")
    if session.acting and session.user:
        monitor.plan.title = " · ".join(p for p in (name, session.user) if p)
        face = MonitorFace(monitor, actor=Actor(session.user, session.address))
        return face, face, monitor.title
    monitor.plan.title = " · ".join(p for p in (name, READ_ONLY_TITLE) if p)
    return MonitorFace(monitor), ReadOnlyActions(), monitor.title


def run_screen(plan: WatchPlan, state_dir: Path, poll: float | None, bell: bool) -> int:
    """The Textual screen over a monitor running on a background thread."""
    from linewatch.pipeline.monitor import Monitor
    from linewatch.runtime.exiting import exit_later, on_forced_exit

    hook_problems = HookProblems()
    monitor = Monitor(plan, state_dir, emit=hook_problems, poll_seconds=poll)
    face, actions, title = browser_face(monitor)
    stop = threading.Event()
    worker = threading.Thread(target=monitor.run, args=(stop,), name="collector", daemon=True)
    worker.start()

    def stop_collecting() -> None:
        """Finish the collector's pass and give its lease up (also on a forced exit)."""
        stop.set()
        worker.join(timeout=5)

    forget = on_forced_exit(stop_collecting)
    try:
        from linewatch.faces.tui.app import run_app

        def arm_last_resort(code: int) -> None:
            """Should the normal way out hang on a terminal that is gone, the clean-ups
            registered above still run after a grace period and the process ends."""
            exit_later(code, HANGUP_GRACE)

        return run_app(face, actions, bell=bell, title=title, on_hang_up=arm_last_resort)
    finally:
        forget()
        stop_collecting()
        face.close()
        for m in hook_problems.kept:
            print(f"linewatch: alarm hook: {m['problem']}", file=sys.stderr)
