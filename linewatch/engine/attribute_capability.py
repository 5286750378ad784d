"""Capability of attribute data: the overall proportion (or rate) with its exact interval.

For pass/fail data the process performs at p̂ = Σd / Σn nonconforming, with the Clopper–Pearson
interval (the exact binomial one: lower = Beta⁻¹(α/2; d, n − d + 1), upper =
Beta⁻¹(1 − α/2; d + 1, n − d)); for defect counts at û = Σc / Σn per unit (per subgroup for a c
chart), with the exact Poisson interval on Σc (χ²⁻¹(α/2; 2c)/2 … χ²⁻¹(1 − α/2; 2c + 2)/2),
divided by Σn. ppm is the proportion (or defects per unit) times 10⁶. Cp and Cpk do not apply:
there are no spec limits on a proportion. The quantiles come from `distributions.py`, so this
needs no scipy; the tests hold it to scipy.stats.
"""

from __future__ import annotations

from dataclasses import dataclass

from linewatch.engine.distributions import beta_quantile, chi_square_upper_quantile

CONFIDENCE = 0.95
PPM = 1e6
NOT_APPLICABLE = "Cp and Cpk do not apply to attribute data (no spec limits on a proportion)"


@dataclass(frozen=True, slots=True)
class AttributeCapability:
    """Events (nonconforming units or defects) over exposure (units or inspection units)."""

    kind: str  # "proportion" or "rate"
    events: int
    exposure: float
    estimate: float
    lower: float
    upper: float
    confidence: float

    @property
    def ppm(self) -> tuple[float, float, float]:
        """(estimate, lower, upper) per million units."""
        return self.estimate * PPM, self.lower * PPM, self.upper * PPM


def clopper_pearson(events: int, trials: int, confidence: float = CONFIDENCE
                    ) -> tuple[float, float]:
    """Exact binomial interval for a proportion of `events` in `trials`."""
    if trials <= 0 or not 0 <= events <= trials:
        raise ValueError(f"{events} of {trials} is not a proportion")
    alpha = 1.0 - confidence
    lower = 0.0 if events == 0 else beta_quantile(events, trials - events + 1, alpha / 2)
    upper = 1.0 if events == trials else beta_quantile(events + 1, trials - events,
                                                       1.0 - alpha / 2)
    return lower, upper


def poisson_exact(events: int, confidence: float = CONFIDENCE) -> tuple[float, float]:
    """Exact interval for the mean of a Poisson count `events` (Garwood's)."""
    if events < 0:
        raise ValueError(f"a count cannot be negative, got {events}")
    alpha = 1.0 - confidence
    lower = 0.0 if events == 0 else chi_square_upper_quantile(2 * events, 1.0 - alpha / 2) / 2
    upper = chi_square_upper_quantile(2 * events + 2, alpha / 2) / 2
    return lower, upper


def proportion_capability(events: int, trials: int, confidence: float = CONFIDENCE
                          ) -> AttributeCapability:
    """Overall proportion nonconforming with its Clopper–Pearson interval."""
    lo, hi = clopper_pearson(events, trials, confidence)
    return AttributeCapability("proportion", events, float(trials), events / trials, lo, hi,
                               confidence)


def rate_capability(events: int, exposure: float, confidence: float = CONFIDENCE
                    ) -> AttributeCapability:
    """Overall defects per unit with the exact Poisson interval."""
    if not exposure > 0:
        raise ValueError(f"the exposure must be more than 0, got {exposure}")
    lo, hi = poisson_exact(events, confidence)
    return AttributeCapability("rate", events, float(exposure), events / exposure,
                               lo / exposure, hi / exposure, confidence)
