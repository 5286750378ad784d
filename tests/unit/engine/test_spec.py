"""Out-of-spec readings per side and their episodes, against the definition worked by hand."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from linewatch.engine.spec import ABOVE_USL, BELOW_LSL, out_of_spec

LSL, USL = 9.5, 10.5


def test_a_worked_series_gives_its_readings_and_episodes_per_side():
    # Worked by hand. A reading equal to a limit conforms (common practice). clear_after = 3:
    # an episode returns at the 3rd quiet reading after its last firing (engine/episodes.py).
    values = [10.0, 10.6, 9.4, 10.0, 10.0, 10.0, 10.7, 10.5, 9.5, 10.0, 10.0, 9.3, 10.0]
    #  index   0     1    2     3     4     5     6     7    8     9    10    11    12
    found = out_of_spec(values, LSL, USL, first_index=100)
    assert found.fired() == {ABOVE_USL: [101, 106], BELOW_LSL: [102, 111]}
    assert (found.count(BELOW_LSL), found.count(ABOVE_USL), found.count()) == (2, 2, 4)
    both = [(e.first, e.last, e.signals, e.returned_at) for e in found.episodes(3)]
    # 101, 102 together; 106 (3 quiet readings 103..105 returned the first at 105);
    # 111 is 5 readings after 106: a third episode, not yet returned at 112
    assert both == [(101, 102, 2, 105), (106, 106, 1, 109), (111, 111, 1, None)]
    above = [(e.first, e.last, e.returned_at) for e in found.episodes(3, ABOVE_USL)]
    assert above == [(101, 101, 104), (106, 106, 109)]
    below = [(e.first, e.last, e.returned_at) for e in found.episodes(3, BELOW_LSL)]
    assert below == [(102, 102, 105), (111, 111, None)]


def test_a_missing_limit_never_fires():
    found = out_of_spec([1.0, -5.0, 9.0], None, 2.0)
    assert found.fired() == {ABOVE_USL: [2], BELOW_LSL: []}
    assert out_of_spec([1.0, -5.0, 9.0], None, None).count() == 0


def test_no_readings_no_episodes():
    found = out_of_spec([], LSL, USL, first_index=7)
    assert found.count() == 0 and found.episodes(8) == []
    with pytest.raises(ValueError, match="side"):
        found.count("both")


@settings(max_examples=200, deadline=None)
@given(
    st.lists(st.integers(-6, 6).map(lambda k: 10.0 + k * 0.25), max_size=80),
    st.integers(0, 1000),
    st.booleans(),
    st.booleans(),
)
def test_each_reading_is_judged_by_the_definition(values, first, has_lsl, has_usl):
    # The definition, one reading at a time: above USL is "usl", below LSL is "lsl", equal to a
    # limit conforms. Values on a 0.25 grid land on both limits often.
    lsl, usl = (LSL if has_lsl else None), (USL if has_usl else None)
    want: dict[str, list[int]] = {ABOVE_USL: [], BELOW_LSL: []}
    for k, v in enumerate(values):
        if usl is not None and v > usl:
            want[ABOVE_USL].append(first + k)
        if lsl is not None and v < lsl:
            want[BELOW_LSL].append(first + k)
    found = out_of_spec(np.array(values), lsl, usl, first_index=first)
    assert found.fired() == want
    assert (found.first, found.last) == (first, first + len(values) - 1)
