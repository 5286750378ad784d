"""Incremental evaluation of run rules, one point at a time (live data).

Each `RuleState` keeps only small counters for one `RuleSpec` from `rulebook.py`. Because every
rule's decision depends only on its last `spec.lookback` points, the state can always be rebuilt
by replaying that many recent points; `ChartRules.replay` does exactly that after a restart.
"""

from __future__ import annotations

import math
from collections import deque
from collections.abc import Iterable
from dataclasses import dataclass

from linewatch.engine.rulebook import RuleSpec
from linewatch.engine.rules import LEVEL_BEYOND


def classify_point(
    x: float,
    center: float,
    sigma: float,
    ucl: float | None = None,
    lcl: float | None = None,
) -> tuple[int, int]:
    """Side (−1/0/+1) and zone level (1..4) of one point; the scalar twin of rules.classify."""
    side = (x > center) - (x < center)
    if ucl is not None or lcl is not None:
        hi = math.inf if ucl is None else ucl
        lo = -math.inf if lcl is None else lcl
        return side, LEVEL_BEYOND if (x > hi or x < lo) else 1
    z = abs(x - center) / sigma
    return side, 1 + (z > 1) + (z > 2) + (z > 3)


class RuleState:
    """Counters for one rule; `push` returns whether the rule fires at the new point."""

    __slots__ = ("count", "down", "k", "last_down", "last_up", "length", "n", "prev", "prev_d",
                 "spec", "up", "window", "zone")

    def __init__(self, spec: RuleSpec) -> None:
        self.spec = spec
        self.length = spec.length
        self.k = spec.k
        self.zone = spec.zone
        self.reset()

    def reset(self) -> None:
        """Forget everything (a new phase of limits starts)."""
        self.n = 0  # points seen
        self.count = 0
        self.up = 0
        self.down = 0
        self.prev: float | None = None
        self.prev_d = 0
        self.last_up = -(10**9)
        self.last_down = -(10**9)
        self.window: deque[int] = deque()

    def push(self, x: float, side: int, level: int) -> bool:
        kind = self.spec.kind
        i = self.n
        self.n += 1
        if kind == "beyond":
            return level >= LEVEL_BEYOND
        if kind == "side-run":
            if side == 0:
                self.count = 0
                self.prev_d = 0
            elif side == self.prev_d:
                self.count += 1
            else:
                self.count = 1
                self.prev_d = side
            return self.count >= self.length
        if kind == "trend":
            prev, self.prev = self.prev, x
            if prev is None:
                return False
            self.up = self.up + 1 if x > prev else 0
            self.down = self.down + 1 if x < prev else 0
            return self.up >= self.length - 1 or self.down >= self.length - 1
        if kind == "alternate":
            prev, self.prev = self.prev, x
            if prev is None:
                self.count = 1
                return False
            d = (x > prev) - (x < prev)
            if d == 0:
                self.count = 1
            elif self.prev_d != 0 and d == -self.prev_d:
                self.count += 1
            else:
                self.count = 2
            self.prev_d = d
            return self.count >= self.length
        if kind == "k-of-m":
            flag = side if level > self.zone else 0
            self.window.append(flag)
            if flag > 0:
                self.up += 1
            elif flag < 0:
                self.down += 1
            if len(self.window) > self.length:
                old = self.window.popleft()
                if old > 0:
                    self.up -= 1
                elif old < 0:
                    self.down -= 1
            return (flag > 0 and self.up >= self.k) or (flag < 0 and self.down >= self.k)
        if kind == "within":
            self.count = self.count + 1 if level == 1 else 0
            return self.count >= self.length
        if kind == "mixture":
            if level >= 2:
                self.count += 1
                if side > 0:
                    self.last_up = i
                elif side < 0:
                    self.last_down = i
            else:
                self.count = 0
            start = i - self.length + 1
            return self.count >= self.length and self.last_up >= start and self.last_down >= start
        raise ValueError(f"unknown rule kind {kind!r}")


@dataclass(slots=True)
class ChartLimitsState:
    """The limits a chart's points are judged against."""

    center: float
    sigma: float
    ucl: float | None = None  # set for dispersion charts (asymmetric limits)
    lcl: float | None = None


def lookback(specs: Iterable[RuleSpec]) -> int:
    """How many recent points rebuild the state of these rules exactly."""
    return max((s.lookback for s in specs), default=1)


class ChartRules:
    """All selected rules of one chart, fed point by point."""

    def __init__(self, specs: Iterable[RuleSpec], limits: ChartLimitsState) -> None:
        self.specs = list(specs)
        self.states = [RuleState(s) for s in self.specs]
        self.limits = limits

    @property
    def lookback(self) -> int:
        """How many recent points rebuild the state exactly."""
        return lookback(self.specs)

    def push(self, x: float) -> list[str]:
        """Rule ids that fire at this new point."""
        lim = self.limits
        side, level = classify_point(x, lim.center, lim.sigma, lim.ucl, lim.lcl)
        return [st.spec.id for st in self.states if st.push(x, side, level)]

    def replay(self, recent: list[float]) -> None:
        """Rebuild the counters from the most recent points (already judged; results dropped)."""
        for st in self.states:
            st.reset()
        for x in recent[-self.lookback :]:
            self.push(x)
