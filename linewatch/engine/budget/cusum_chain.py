"""ARL of the tabular CUSUM by the Markov chain of Brook & Evans (Biometrika 59(3), 1972).

One side's statistic C (standardised, reference k, decision interval h) is a Markov chain: the
atom C = 0 and `cells` equal cells over (0, h], each represented by its midpoint; a step from c
goes to 0 with probability Φ(k − c − μ) and into the cell (a, b] with Φ(b − c + k − μ) −
Φ(a − c + k − μ); past h it signals. ARL = 1 + p_start·(I − Q)⁻¹·1, with the first step taken
from the exact head start. The midpoint error falls as 1/cells², so two grids are combined by
Richardson extrapolation. Two sides: 1/ARL = 1/ARL⁺ + 1/ARL⁻ (exact when the two sides cannot
be positive together, and within the discretisation error for the usual k and h; common
practice, e.g. Montgomery's CUSUM ARL table); with a head start that relation does not hold,
and the power table simulates instead.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from linewatch.engine.budget.gaussian import normal_cdf_array

CELLS = 100  # the finer grid has twice as many


def _one_sided(k: float, h: float, start: float, shift: float, cells: int) -> float:
    w = h / cells
    j = np.arange(cells + 1)  # cell j is (edges[j−1], edges[j]], edges = j·w
    # F[i, j] = P(next C ≤ edges[j] | C = origin i) = Φ(edges[j] − c_i + k − μ). From the atom
    # (c = 0) that is Φ(j·w + k − μ); from cell i (c = (i − ½)·w) Φ((j − i + ½)·w + k − μ), a
    # function of j − i only, so Φ is needed at 3·cells + 2 points, not (cells + 1)².
    atom = normal_cdf_array(j * w + (k - shift))
    offsets = np.arange(-cells, cells + 1)  # j − i
    band = normal_cdf_array((offsets + 0.5) * w + (k - shift))
    i = np.arange(1, cells + 1)
    f = np.vstack((atom[None, :], band[(j[None, :] - i[:, None]) + cells]))
    q = np.concatenate((f[:, :1], np.diff(f, axis=1)), axis=1)  # to the atom, then to cells
    t = np.linalg.solve(np.eye(cells + 1) - q, np.ones(cells + 1))
    first = normal_cdf_array(j * w - start + (k - shift))
    p_start = np.concatenate((first[:1], np.diff(first)))
    return float(1.0 + p_start @ t)


@lru_cache(maxsize=512)
def one_sided_run_length(k: float, h: float, shift: float, start: float = 0.0) -> float:
    """ARL of the upper one-sided CUSUM when the standardised mean is `shift`."""
    coarse = _one_sided(k, h, start, shift, CELLS)
    fine = _one_sided(k, h, start, shift, 2 * CELLS)
    return (4.0 * fine - coarse) / 3.0


def cusum_run_length(k: float, h: float, shift: float) -> float:
    """ARL of the two-sided tabular CUSUM without a head start, mean shifted by `shift` σ."""
    up = one_sided_run_length(k, h, shift)
    down = one_sided_run_length(k, h, -shift)
    return 1.0 / (1.0 / up + 1.0 / down)
