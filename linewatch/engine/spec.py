"""Out-of-spec readings: which readings lie outside the specification, and their episodes.

A reading is nonconforming when it is above USL (side "usl") or below LSL (side "lsl"); a reading
equal to a limit conforms, and a missing limit never fires (common practice). NaN compares false
with both limits, so it conforms too (the feeds drop NaN before it gets here). Episodes follow
`engine.episodes`, counted in readings: the alarm lifecycle applies that definition incrementally
to the firings found here, and a whole history gives the same episodes from `OutOfSpec.episodes`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from linewatch.engine.episodes import Episode, episodes

BELOW_LSL = "lsl"
ABOVE_USL = "usl"


@dataclass(frozen=True, slots=True)
class OutOfSpec:
    """Positions (into the readings so far) of the nonconforming readings, per side, over the
    readings `first`..`last`."""

    below: np.ndarray  # int64, ascending
    above: np.ndarray  # int64, ascending
    first: int
    last: int  # first − 1 when there were no readings

    def fired(self) -> dict[str, list[int]]:
        """Side name -> positions, the form the alarm lifecycle takes."""
        return {ABOVE_USL: self.above.tolist(), BELOW_LSL: self.below.tolist()}

    def count(self, side: str | None = None) -> int:
        """Nonconforming readings on `side` ("lsl" or "usl"), or on both."""
        if side is None:
            return int(self.below.shape[0] + self.above.shape[0])
        return int(self._side(side).shape[0])

    def episodes(self, clear_after: int, side: str | None = None) -> list[Episode]:
        """Episodes (`engine.episodes`) of the readings outside the specification on `side`, or
        on either side together (the out-of-spec alarm's episodes: one alarm per
        characteristic)."""
        at = np.concatenate((self.below, self.above)) if side is None else self._side(side)
        return episodes(at, self.last, clear_after)

    def _side(self, side: str) -> np.ndarray:
        if side == BELOW_LSL:
            return self.below
        if side == ABOVE_USL:
            return self.above
        raise ValueError(f"no specification side {side!r} (lsl or usl)")


def out_of_spec(
    values: Sequence[float] | np.ndarray,
    lsl: float | None,
    usl: float | None,
    first_index: int = 0,
) -> OutOfSpec:
    """The readings of `values` (positions first_index..) below LSL and above USL, with numpy."""
    x = np.asarray(values, dtype=float)
    high = np.zeros(x.shape[0], dtype=bool) if usl is None else x > usl
    low = np.zeros(x.shape[0], dtype=bool) if lsl is None else (x < lsl) & ~high
    # (a reading counts on one side only, even with limits the wrong way round)
    def at(mask: np.ndarray) -> np.ndarray:
        return np.flatnonzero(mask).astype(np.int64) + first_index

    return OutOfSpec(at(low), at(high), first_index, first_index + x.shape[0] - 1)
