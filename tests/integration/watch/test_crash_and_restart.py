"""A watcher killed with SIGKILL at random moments while rows arrive loses nothing and doubles
nothing: after restarts, the alarms equal those of an uninterrupted run, acknowledgements are
kept, and a run that spans a restart still fires."""

from __future__ import annotations

import random
import subprocess
import sys
import threading
import time

from tests.integration.watch.helpers import (
    HEADER,
    episodes_of,
    offset_of,
    process_series,
    records,
    rows_text,
    start_watch,
    stop,
    wait_caught_up,
)


def _writer(path, lines, done: threading.Event, seed: int) -> None:
    rnd = random.Random(seed)
    with path.open("a") as f:
        for line in lines:
            f.write(line)
            f.flush()
            if rnd.random() < 0.05:
                time.sleep(0.01)
    done.set()


def test_sigkill_at_random_moments_loses_and_doubles_nothing(tmp_path):
    log = tmp_path / "line.csv"
    log.write_text(HEADER)
    lines = rows_text(process_series(1500, seed=21))
    crashed = tmp_path / "crashed"
    done = threading.Event()
    writer = threading.Thread(target=_writer, args=(log, lines, done, 3))
    args = ("--baseline", "30", "--rules", "nelson", "--lsl", "9.7", "--usl", "10.6")
    proc = start_watch([str(log)], crashed, *args, stdout=subprocess.DEVNULL)
    writer.start()
    rnd = random.Random(5)
    kills = 0
    acked = None
    while not done.is_set() or kills < 3:
        time.sleep(rnd.uniform(0.3, 0.9))
        if kills == 1 and acked is None:
            # acknowledge one alarm from the shell between two crashes: the collector is
            # running, so wait until it has raised one (a busy machine starts it slowly)
            deadline = time.monotonic() + 60
            opened: list[dict] = []
            while not opened and time.monotonic() < deadline:
                listed = subprocess.run(
                    [sys.executable, "-m", "linewatch", "alarms", "list", "--format", "jsonl",
                     "--state-dir", str(crashed)], capture_output=True, text=True, timeout=60)
                opened = records(listed.stdout)
            if opened:
                acked = opened[0]["id"]
                subprocess.run(
                    [sys.executable, "-m", "linewatch", "alarms", "ack", str(acked), "--reason",
                     "1", "--note", "checked by hand", "--state-dir", str(crashed)],
                    check=True, timeout=60, capture_output=True)
        proc.kill()
        proc.wait()
        kills += 1
        proc = start_watch([str(log)], crashed, *args, stdout=subprocess.DEVNULL)
    writer.join()
    wait_caught_up(crashed, log, timeout=60)
    stop(proc)

    straight = tmp_path / "straight"
    proc = start_watch([str(log)], straight, *args, stdout=subprocess.DEVNULL)
    wait_caught_up(straight, log, timeout=60)
    stop(proc)
    # the same episodes were shown to the operator, with or without crashes and an
    # acknowledgement in between (which only decides which alarm row an episode goes to)
    expected = episodes_of(straight)
    assert expected  # the series has special causes on purpose
    assert episodes_of(crashed) == expected
    assert acked is not None, "no alarm was open to acknowledge between the crashes"
    all_alarms = records(subprocess.run(
        [sys.executable, "-m", "linewatch", "alarms", "list", "--all", "--format", "jsonl",
         "--state-dir", str(crashed)], capture_output=True, text=True, timeout=60).stdout)
    mine = next(a for a in all_alarms if a["id"] == acked)
    assert mine["acknowledged_by"] and mine["note"] == "checked by hand"


def test_a_run_that_spans_a_restart_still_fires(tmp_path):
    log = tmp_path / "line.csv"
    base = [10.0, 10.3, 9.8, 10.1, 9.9, 10.2, 9.7, 10.0, 10.2, 9.8] * 3  # baseline of 30
    run_above = [10.05] * 9  # nine in a row above the centre line (n2)
    log.write_text(HEADER + "".join(rows_text(base + run_above[:5])))
    state = tmp_path / "state"
    proc = start_watch([str(log)], state, "--baseline", "30", "--rules", "n2")
    wait_caught_up(state, log)
    first, _ = stop(proc)
    assert not [r for r in records(first) if r["type"] == "signal"]
    with log.open("a") as f:
        f.writelines(rows_text(run_above[5:], start=35))
    proc = start_watch([str(log)], state, "--baseline", "30", "--rules", "n2")
    wait_caught_up(state, log)
    second, _ = stop(proc)
    sig = [r for r in records(second) if r["type"] == "signal"]
    assert [(s["rule"], s["index"], s["line"]) for s in sig] == [("n2", 38, 40)]
    assert offset_of(state, log) == log.stat().st_size


def test_the_summary_after_a_restart_covers_every_stored_reading_and_says_what_this_run_read(
    tmp_path,
):
    """The summary's figures come from the store, so its point count must too: after a
    restart it counts the readings of both runs (and the figures agree with `check` on the
    whole file); `read` is this run's share."""
    log = tmp_path / "line.csv"
    series = process_series(60, seed=8)
    log.write_text(HEADER + "".join(rows_text(series[:45])))
    state = tmp_path / "state"
    first = start_watch([str(log)], state, "--baseline", "20")
    wait_caught_up(state, log)
    stop(first)
    with log.open("a") as f:
        f.writelines(rows_text(series[45:], start=45))
    second = start_watch([str(log)], state, "--baseline", "20")
    wait_caught_up(state, log)
    out, err = stop(second)
    assert second.returncode == 0, err
    summary = next(r for r in records(out) if r["type"] == "summary")
    assert (summary["points"], summary["read"]) == (60, 15)
    checked = subprocess.run(
        [sys.executable, "-m", "linewatch", "check", str(log), "--baseline", "20",
         "--format", "jsonl"], capture_output=True, text=True, timeout=60)
    whole = next(r for r in records(checked.stdout) if r["type"] == "summary")
    assert summary["mean"] == whole["mean"] and summary["stdev"] == whole["stdev"]
