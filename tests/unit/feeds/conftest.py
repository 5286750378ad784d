"""Shared helpers for the feed tests: real files, a real tailer and a real waker."""

from __future__ import annotations

import time
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pytest

from linewatch.config.model import FeedConfig
from linewatch.domain.records import FeedEvent, Rejected
from linewatch.feeds.tailer import TailChunk, Tailer
from linewatch.feeds.watcher import Waker


@dataclass
class Seen:
    """Everything a tailer handed out, accumulated in order."""

    values: dict[str, list[float]] = field(default_factory=dict)
    lines: dict[str, list[tuple[str, int]]] = field(default_factory=dict)
    times: dict[str, list[str | None]] = field(default_factory=dict)
    rejected: list[Rejected] = field(default_factory=list)
    events: list[FeedEvent] = field(default_factory=list)
    chunks: list[TailChunk] = field(default_factory=list)

    def add(self, chunk: TailChunk) -> None:
        self.chunks.append(chunk)
        self.events.extend(chunk.events)
        b = chunk.batch
        if b is None:
            return
        self.rejected.extend(b.rejected)
        for name, vals in b.values.items():
            self.values.setdefault(name, []).extend(np.asarray(vals, dtype=float).tolist())
            self.lines.setdefault(name, []).extend((b.file, int(n)) for n in b.lines[name])
            self.times.setdefault(name, []).extend(b.times[name])

    def kinds(self) -> list[str]:
        return [e.kind for e in self.events]


class Follow:
    """A tailer driven the way the monitor drives it: wait on the waker, then poll."""

    def __init__(self, tailer: Tailer, waker: Waker | None) -> None:
        self.tailer = tailer
        self.waker = waker
        self.seen = Seen()

    def poll(self) -> list[TailChunk]:
        chunks = self.tailer.poll()
        for c in chunks:
            self.seen.add(c)
        return chunks

    def until(self, done: Callable[[Seen], bool], timeout: float = 5.0) -> Seen:
        """Poll on each wake-up until `done(seen)` holds; fail after `timeout` seconds."""
        deadline = time.monotonic() + timeout
        while True:
            self.poll()
            if done(self.seen):
                return self.seen
            if time.monotonic() > deadline:
                raise AssertionError(f"timed out; seen so far: {self.seen}")
            if self.waker is not None:
                self.waker.wait(0.2)
            else:
                time.sleep(0.01)

    def settle(self, rounds: int = 3) -> Seen:
        """Poll a few more times so anything that would wrongly show up does."""
        for _ in range(rounds):
            self.poll()
            if self.waker is not None:
                self.waker.wait(0.05)
        return self.seen


@pytest.fixture
def follow():
    """Factory: follow(patterns, feed=None, columns=None, saved=None, poll_seconds=0,
    max_open=200) with a real waker."""
    made: list[Follow] = []

    def make(
        patterns: list[str | Path],
        feed: FeedConfig | None = None,
        columns: list[str] | None = None,
        saved: dict | None = None,
        poll_seconds: float = 0.0,
        max_open: int = 200,
    ) -> Follow:
        pats = [str(p) for p in patterns]
        if feed is not None:
            feed.paths = pats
            tailer = Tailer([feed], columns, saved, shrink_grace=0.3, max_open=max_open)
        else:
            tailer = Tailer([], columns, saved, patterns=pats, shrink_grace=0.3,
                            max_open=max_open)
        waker = Waker(tailer.patterns, poll_seconds=poll_seconds, safety_seconds=1.0)
        f = Follow(tailer, waker)
        made.append(f)
        return f

    yield make
    for f in made:
        f.tailer.close()
        if f.waker is not None:
            f.waker.close()

