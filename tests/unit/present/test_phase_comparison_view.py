"""The close-up's comparison of the last two phases of limits, held to scipy.stats."""

from __future__ import annotations

import numpy as np
from scipy import stats

from linewatch.config.model import CharacteristicConfig
from linewatch.domain.records import Limits
from linewatch.present.snapshot import _last_two_compared
from linewatch.store.points import StoredLimits


def _rec(phase: int, start: int) -> StoredLimits:
    return StoredLimits(Limits("od", "individuals", 12.0, 12.03, 11.97, 0.01, phase, start),
                        "", 0.0)


def test_the_last_two_phases_are_compared_in_words() -> None:
    rng = np.random.default_rng(5)
    values = np.concatenate([rng.normal(12.0, 0.01, 50), rng.normal(12.0, 0.01, 40),
                             rng.normal(12.02, 0.01, 60)])
    c = CharacteristicConfig(name="od", column="od", unit="mm", lsl=11.94, usl=12.06)
    text = _last_two_compared(values, 0, [_rec(0, 0), _rec(1, 50), _rec(2, 90)], c, 1)
    p = stats.ttest_ind(values[90:], values[50:90], equal_var=False).pvalue  # the reference
    assert p < 0.001 and "p < 0.001" in text
    assert text.startswith("Phase 2 is") and "higher than phase 1" in text
    assert "large enough to matter" in text and "Brown–Forsythe" in text


def test_one_phase_has_nothing_to_compare() -> None:
    c = CharacteristicConfig(name="od", column="od")
    assert _last_two_compared(np.ones(30), 0, [_rec(0, 0)], c, 1) == ""
