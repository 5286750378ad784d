"""Laney's σ_z: how much more (or less) the subgroups vary than the binomial or Poisson model says.

Laney (Quality Engineering 14(4), 2002): with z_i = (p_i − p̄)/σ_pi, the spread of the z_i is
σ_z = MR̄(z)/d2(2) (d2(2) = 1.128), and the p′ (or u′) limits are p̄ ± 3·σ_pi·σ_z. Very large
subgroups make σ_pi tiny, so real between-subgroup variation puts most points outside the plain
p chart's limits; σ_z near 1 means the plain chart is right.

When σ_z "differs clearly" from 1 is our own threshold: |σ_z − 1| beyond the larger of 0.2 (the
limits would change by a fifth: the smallest change worth another chart) and three standard
errors of the estimate. MR̄/d2 from m points has relative standard error √(V/(m − 1)), where
V = (Var|D| + 2·Cov(|D₁|, |D₂|)) / E|D|² for the differences D of neighbouring standard normal
values: Var|D| = 2(1 − 2/π) and, neighbouring differences having correlation −½,
Cov = (4/π)(√¾ − ½·asin(−½) − 1), so V ≈ 0.826 (the tests check it by simulation).
"""

from __future__ import annotations

from dataclasses import dataclass
from math import asin, isnan, pi, sqrt

import numpy as np

from linewatch.engine import constants as k

PRACTICAL_BAND = 0.2
SE_COUNT = 3.0
_E = 2.0 / sqrt(pi)  # E|D|, D = Z1 − Z2 (√2 times E|Z|)
_VAR = 2.0 * (1.0 - 2.0 / pi)
_COV = (4.0 / pi) * (sqrt(0.75) + (-0.5) * asin(-0.5) - 1.0)
RELATIVE_VARIANCE = (_VAR + 2.0 * _COV) / (_E * _E)


def sigma_z(z: np.ndarray) -> float:
    """MR̄(z)/d2(2): the spread of the standardised points (NaN with fewer than two)."""
    v = np.asarray(z, dtype=float)
    if v.shape[0] < 2:
        return float("nan")
    return float(np.mean(np.abs(np.diff(v)))) / k.d2(2)


def relative_standard_error(points: int) -> float:
    """Relative standard error of σ_z estimated from `points` standardised points."""
    return sqrt(RELATIVE_VARIANCE / (points - 1)) if points >= 2 else float("inf")


@dataclass(frozen=True, slots=True)
class Dispersion:
    """The verdict on σ_z: `kind` is "over", "under" or "" (consistent with the model)."""

    sigma_z: float
    points: int
    band: float  # σ_z within 1 ± band counts as 1

    @property
    def kind(self) -> str:
        if isnan(self.sigma_z):  # nothing to say
            return ""
        if self.sigma_z > 1.0 + self.band:
            return "over"
        if self.sigma_z < 1.0 - self.band:
            return "under"
        return ""

    @property
    def suggests_laney(self) -> bool:
        return self.kind != ""

    def describe(self, model: str) -> str:
        """One sentence for the user (`model`: "binomial" or "Poisson")."""
        if self.kind == "over":
            return (f"the subgroups vary more than the {model} model allows (sigma_z = "
                    f"{self.sigma_z:.2f}); a Laney chart fits better")
        if self.kind == "under":
            return (f"the subgroups vary less than the {model} model allows (sigma_z = "
                    f"{self.sigma_z:.2f}); a Laney chart fits better")
        return f"the subgroups vary as the {model} model allows (sigma_z = {self.sigma_z:.2f})"


def judge_dispersion(z: np.ndarray) -> Dispersion:
    """σ_z of the standardised baseline points and whether it differs clearly from 1."""
    m = int(np.asarray(z).shape[0])
    band = max(PRACTICAL_BAND, SE_COUNT * relative_standard_error(m))
    return Dispersion(sigma_z(z), m, band)
