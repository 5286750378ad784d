"""Collector lease: one collector per state directory; a viewer takes over within 5 s when the
collector exits or is killed. Real processes, real SIGKILL."""

from __future__ import annotations

import os
import select
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from linewatch.store.db import Store
from linewatch.store.lease import EXPIRES_AFTER, Lease

WORKER = Path(__file__).with_name("lease_worker.py")


def test_one_holder_at_a_time_and_expiry(store: Store) -> None:
    a, b = Lease(store, "a"), Lease(store, "b")
    assert a.try_acquire(now=100.0)
    assert not b.try_acquire(now=101.0)
    assert a.renew(now=102.0)
    assert not b.try_acquire(now=102.0 + EXPIRES_AFTER - 0.1)  # renewed, still valid
    assert b.try_acquire(now=102.0 + EXPIRES_AFTER + 0.1)  # lapsed: taken over
    assert not a.renew(now=106.0)  # the old collector learns it lost the lease
    holder = b.holder()
    assert holder is not None and holder.holder == "b" and holder.pid == os.getpid()


def test_a_replaced_collector_cannot_write_its_batch(store: Store) -> None:
    from linewatch.domain.errors import LeaseLost
    from linewatch.domain.records import FeedEvent

    a, b = Lease(store, "a"), Lease(store, "b")
    assert a.try_acquire(now=100.0)
    with store.transaction():
        a.ensure()  # still ours (even past expiry, while nobody took it)
        store.history.add_feed_event(FeedEvent("appeared", "od.csv"), at=100.0)
    assert b.try_acquire(now=100.0 + EXPIRES_AFTER + 1)  # a stalled; b took over
    with pytest.raises(LeaseLost), store.transaction():
        a.ensure()
        store.history.add_feed_event(FeedEvent("rotated", "od.csv"), at=105.0)
    assert [e.event.kind for e in store.history.feed_events()] == ["appeared"]
    assert not a.held


def test_release_frees_the_lease_at_once(store: Store) -> None:
    a, b = Lease(store, "a"), Lease(store, "b")
    assert a.try_acquire(now=100.0)
    a.release()
    assert b.try_acquire(now=100.1)
    a.release()  # releasing what another holds does nothing
    assert b.holder() is not None and b.renew(now=100.2)


def test_acquiring_again_keeps_the_start_time(store: Store) -> None:
    a = Lease(store, "a")
    assert a.try_acquire(now=100.0) and a.try_acquire(now=101.0)
    holder = a.holder()
    assert holder is not None and (holder.acquired_at, holder.expires_at) == (
        100.0, 101.0 + EXPIRES_AFTER,
    )


def start(state: Path, name: str) -> subprocess.Popen[str]:
    return subprocess.Popen(
        [sys.executable, str(WORKER), str(state), name], stdout=subprocess.PIPE, text=True
    )


def read_line(proc: subprocess.Popen[str], timeout: float) -> str | None:
    assert proc.stdout is not None
    ready, _, _ = select.select([proc.stdout], [], [], timeout)
    return proc.stdout.readline().strip() if ready else None


@pytest.mark.parametrize("how", ["sigkill", "sigterm"])
def test_viewer_process_takes_over_within_5_seconds(tmp_path: Path, how: str) -> None:
    Store(tmp_path / "s").close()
    first = start(tmp_path / "s", "first")
    second = None
    try:
        assert read_line(first, 10) == "started first"
        line = read_line(first, 10)
        assert line is not None and line.startswith("collecting first")
        second = start(tmp_path / "s", "second")
        assert read_line(second, 10) == "started second"
        assert read_line(second, 1.5) is None  # a viewer while the collector lives
        stopped = time.time()
        first.send_signal(signal.SIGKILL if how == "sigkill" else signal.SIGTERM)
        first.wait(5)
        line = read_line(second, 6)
        assert line is not None and line.startswith("collecting second"), line
        took_over = float(line.split()[-1])
        assert took_over - stopped < 5.0
        if how == "sigterm":  # a released lease is taken at the viewer's next attempt
            assert took_over - stopped < 1.5
    finally:
        for p in (first, second):
            if p is not None and p.poll() is None:
                p.kill()
                p.wait()
