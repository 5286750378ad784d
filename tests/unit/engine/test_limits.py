"""Phase I and standard-given limits against published worked examples and factor tables.

Worked examples: Montgomery, Introduction to Statistical Quality Control, the piston-ring
inside-diameter example (25 subgroups of 5; x̿ = 74.001, R̄ = 0.023, s̄ = 0.0094), printed limits
quoted from memory. Factors for individuals charts: E2 = 2.66 and D4(2) = 3.267 (common practice).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from linewatch.domain.errors import NotEnoughData
from linewatch.engine.limits import estimate_limits, given_limits


def test_xbar_r_limits_match_the_piston_ring_example():
    lim = estimate_limits(np.full(25, 74.001), np.full(25, 0.023), 5, "range")
    assert lim.location.ucl == pytest.approx(74.014, abs=0.0005)
    assert lim.location.lcl == pytest.approx(73.988, abs=0.0005)
    assert lim.dispersion.center == pytest.approx(0.023)
    assert lim.dispersion.ucl == pytest.approx(0.049, abs=0.0005)
    assert lim.dispersion.lcl == 0.0


def test_xbar_s_limits_match_the_piston_ring_example():
    lim = estimate_limits(np.full(25, 74.001), np.full(25, 0.0094), 5, "stdev")
    assert lim.location.ucl == pytest.approx(74.014, abs=0.0005)
    assert lim.location.lcl == pytest.approx(73.988, abs=0.0005)
    assert lim.dispersion.ucl == pytest.approx(0.0196, abs=0.00005)
    assert lim.dispersion.lcl == 0.0


def test_individuals_limits_use_the_mean_moving_range_over_d2():
    x = np.array([10.0, 12.0, 11.0, 13.0, 12.0])
    mr = np.abs(np.diff(x))  # 2, 1, 2, 1 -> MR̄ = 1.5
    lim = estimate_limits(x, mr, 1, "range")
    assert lim.location.center == pytest.approx(11.6)
    assert lim.location.ucl == pytest.approx(11.6 + 2.66 * 1.5, abs=0.002)  # E2 = 2.66
    assert lim.dispersion.ucl == pytest.approx(3.267 * 1.5, abs=0.001)  # D4(2) = 3.267
    assert lim.dispersion.lcl == 0.0
    assert lim.sigma_within == pytest.approx(1.5 / 1.128, abs=1e-3)


def test_standard_given_limits_use_d1_d2_and_b5_b6():
    lim = given_limits(10.0, 2.0, 5, "range")
    assert lim.location.ucl == pytest.approx(10 + 3 * 2 / math.sqrt(5))
    assert lim.dispersion.center == pytest.approx(2.326 * 2, abs=0.001)
    assert lim.dispersion.ucl == pytest.approx(4.918 * 2, abs=0.002)  # D2(5), table value
    assert lim.dispersion.lcl == 0.0  # D1(5) = 0
    s = given_limits(10.0, 2.0, 5, "stdev")
    assert s.dispersion.ucl == pytest.approx(1.964 * 2, abs=0.002)  # B6(5), table value
    assert s.dispersion.lcl == 0.0  # B5(5) = 0
    mr = given_limits(0.0, 1.0, 1, "range")
    assert mr.dispersion.ucl == pytest.approx(3.686, abs=0.001)  # D2(2), table value


def test_a_baseline_with_no_variation_is_refused_with_a_reason():
    with pytest.raises(NotEnoughData, match="sigma estimated as 0"):
        estimate_limits(np.full(5, 3.0), np.zeros(4), 1, "range")


def test_too_few_points_says_how_many_are_needed():
    with pytest.raises(NotEnoughData, match="2 needed"):
        estimate_limits(np.array([1.0]), np.array([]), 1, "range")
