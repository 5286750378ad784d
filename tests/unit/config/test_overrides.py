"""Command-line chart overrides: checked when made, and winning over the config's values."""

from __future__ import annotations

import re

import pytest

from linewatch.config.loading import parse_config
from linewatch.config.overrides import ChartOverrides
from linewatch.config.selection import apply_overrides, feed_for_log, select_characteristics
from linewatch.domain.errors import LinewatchError

CONFIG = """
[[feed]]
paths = ["od_*.csv"]
[[characteristic]]
name = "outer-diameter"
column = "od_mm"
lsl = 24.8
usl = 25.2
subgroup_size = 5
rules = "we1"
clear_after = 4
"""


@pytest.mark.parametrize(
    ("given", "words"),
    [({"center": 10.0}, "--center and --sigma go together"),
     ({"center": 10.0, "sigma": 0.0}, "--sigma must be more than 0"),
     ({"lsl": 2.0, "usl": 1.0}, "--lsl must be below --usl"),
     ({"subgroup_size": 0}, "between 1 and 25"),
     ({"baseline": 1}, "at least 2 plotted points"),
     ({"clear_after": 0}, "--clear-after needs at least 1"),
     ({"rules": "n9"}, "--rules: "),
     ({"usl": 1e300}, "--usl 1e+300 is out of range")],
)
def test_impossible_overrides_are_refused_with_the_option_named(given, words):
    with pytest.raises(LinewatchError, match=re.escape(words)):
        ChartOverrides(**given)


def test_overrides_win_over_the_config_and_leave_the_rest():
    config = parse_config(CONFIG, "line.toml")
    (c,) = config.characteristics
    o = ChartOverrides(rules="nelson", usl=25.5, clear_after=1)
    got = apply_overrides(c, o)
    assert got.rules == ["n1", "n2", "n3", "n4", "n5", "n6", "n7", "n8"]  # Nelson's eight
    assert (got.lsl, got.usl, got.clear_after, got.subgroup_size) == (24.8, 25.5, 1, 5)
    assert c.usl == 25.2 and c.rules == ["we1"]  # the config's own record is untouched


def test_more_than_25_measured_values_a_subgroup_are_refused_for_the_characteristic():
    (c,) = parse_config(CONFIG, "line.toml").characteristics
    with pytest.raises(LinewatchError, match="outer-diameter: must be between 1 and 25"):
        apply_overrides(c, ChartOverrides(subgroup_size=26))


def test_an_override_that_crosses_the_configs_other_limit_is_refused():
    (c,) = parse_config(CONFIG, "line.toml").characteristics
    with pytest.raises(LinewatchError, match="LSL must be below USL"):
        apply_overrides(c, ChartOverrides(lsl=25.3))


def test_columns_pick_by_name_or_column_and_an_unknown_one_lists_the_data():
    config = parse_config(CONFIG, "line.toml")
    by_name = select_characteristics(config, ChartOverrides(columns=("outer-diameter",)), None)
    by_column = select_characteristics(config, ChartOverrides(columns=("od_mm",)), None)
    assert [c.name for c in by_name] == [c.name for c in by_column] == ["outer-diameter"]
    with pytest.raises(LinewatchError, match="numeric columns in the data: od_mm"):
        select_characteristics(config, ChartOverrides(columns=("wall",)), ["od_mm"])


def test_the_decimal_mark_override_reaches_the_feed_of_a_named_log():
    config = parse_config(CONFIG, "line.toml")
    assert feed_for_log(config, "od_1.csv", ChartOverrides()).decimal == "."
    assert feed_for_log(config, "od_1.csv", ChartOverrides(decimal=",")).decimal == ","
