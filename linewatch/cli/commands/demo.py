"""`linewatch demo`: a simulated extrusion line in a temporary folder, with the screen open on it.

Nothing to set up: the simulator writes logs into the folder on a background thread, the bundled
config is copied beside them, and the store lives there too. Quitting removes the folder unless
--keep is given."""

from __future__ import annotations

import shutil
import signal
import tempfile
import threading
from datetime import datetime
from importlib import resources
from pathlib import Path

from linewatch.cli.options import DemoOptions, WatchOptions

DEMO_RATE = 5.0  # rows per second per gauge


def prepare(folder: Path) -> Path:
    """Copy the bundled demo config into `folder`; returns the config's path."""
    text = resources.files("linewatch.demo").joinpath("line.toml").read_text(encoding="utf-8")
    path = folder / "linewatch.toml"
    path.write_text(text, encoding="utf-8")
    return path


def start_simulator(
    folder: Path, seed: int, speed: float, stop: threading.Event
) -> threading.Thread:
    """Run the line simulator into `folder` on a daemon thread until `stop` is set."""
    from linewatch.simulation.line import generate
    from linewatch.simulation.writer import write_feeds

    start = datetime.now().astimezone()
    thread = threading.Thread(
        target=write_feeds,
        args=(folder, generate(seed, DEMO_RATE, start)),
        kwargs={"speed": speed, "duration": None, "stop": stop},
        name="simulator",
        daemon=True,
    )
    thread.start()
    return thread


def _exit_on_hangup() -> None:
    """A closed terminal or SSH session (SIGHUP) or a SIGTERM ends the demo through the normal
    way out, so its temporary folder is removed then too."""

    def leave(signum: int, frame: object) -> None:
        raise SystemExit(128 + signum)

    for sig in (signal.SIGHUP, signal.SIGTERM):
        signal.signal(sig, leave)


def run(options: DemoOptions) -> int:
    """The screen on the simulated line; the folder goes when the screen is quit."""
    from linewatch.cli.commands import watch
    from linewatch.runtime.exiting import on_forced_exit

    folder = Path(tempfile.mkdtemp(prefix="linewatch-demo-"))
    stop = threading.Event()
    sim = None
    _exit_on_hangup()

    def remove_folder() -> None:
        stop.set()
        if not options.keep:
            shutil.rmtree(folder, ignore_errors=True)

    forget = on_forced_exit(remove_folder)  # runs last: after the collector has stopped
    try:
        config_path = prepare(folder)
        sim = start_simulator(folder, options.seed, options.speed, stop)
        watch_options = WatchOptions(config=str(config_path), state_dir=str(folder / "state"))
        return watch.run(watch_options, title="demo extrusion line")
    finally:
        # leaving anyway: a hang-up now must not cut the clean-up short
        for sig in (signal.SIGHUP, signal.SIGTERM):
            signal.signal(sig, signal.SIG_IGN)
        forget()
        stop.set()
        if sim is not None:
            sim.join(timeout=5)
        if options.keep:
            print(f"linewatch demo: the logs and the store are kept in {folder}")
        else:
            shutil.rmtree(folder, ignore_errors=True)
