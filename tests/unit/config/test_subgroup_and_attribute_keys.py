"""The config keys and command-line options for subgroups that follow the data and for
attribute data: read typed, defaults as declared, and every misfit refused naming the key
(config) or the option (command line)."""

from __future__ import annotations

import re

import pytest

from linewatch.config.loading import parse_config
from linewatch.config.overrides import ChartOverrides
from linewatch.config.selection import apply_overrides, chart_setup, select_characteristics
from linewatch.domain.errors import ConfigError, LinewatchError


def _one(body: str):
    (c,) = parse_config("[[characteristic]]\nname = \"x\"\n" + body, "line.toml").characteristics
    return c


def test_subgroup_keys_are_read_typed_and_take_their_defaults():
    c = _one('subgroup_by = "sample"\n')
    assert (c.subgroup_by, c.subgroup_window, c.subgroup_size) == ("sample", None, 1)
    assert c.subgroup_timeout == 300.0  # 5 minutes unless set
    assert c.effective_dispersion == "stdev"  # varying sizes: S (common practice)
    w = _one('subgroup_window = "15m"\nsubgroup_timeout = "2m"\n')
    assert (w.subgroup_window, w.subgroup_timeout) == (900.0, 120.0)
    assert chart_setup(w, None).subgroups == "window"
    assert _one("subgroup_size = 5\n").effective_dispersion == "range"  # as before (n ≤ 9)


def test_attribute_keys_give_the_chart_each_form_expects():
    results = _one('result_column = "verdict"\nsubgroup_by = "lot"\n')
    assert results.effective_chart == "p" and results.column == "verdict"
    assert [v.casefold() for v in results.fail_values] == ["fail", "ng", "nok", "0", "false"]
    counts = _one('count_column = "defects"\n')
    assert counts.effective_chart == "c"
    sized = _one('count_column = "defects"\nsize_column = "units"\nchart = "laney-u"\n')
    assert (sized.effective_chart, chart_setup(sized, None).attribute_chart) == ("laney-u",) * 2


@pytest.mark.parametrize(("body", "key", "words"), [
    ('subgroup_size = 5\nsubgroup_by = "s"\n', "subgroup_by", "exclude each other"),
    ('subgroup_by = "s"\nsubgroup_window = "5m"\n', "subgroup_window", "exclude each other"),
    ('subgroup_window = "15"\n', "subgroup_window", "needs a unit"),
    ('subgroup_window = "2d"\n', "subgroup_window", "from 1s to 1d"),
    ('subgroup_by = ""\n', "subgroup_by", "must name a column"),
    ('subgroup_timeout = "0s"\n', "subgroup_timeout", "more than 0"),
    ('chart = "x"\n', "chart", "must be one of p, np, c, u, laney-p, laney-u"),
    ('chart = "p"\n', "chart", "needs counts"),
    ('result_column = "r"\n', "result_column", "needs subgroups"),
    ('count_column = "d"\nsubgroup_size = 50\n', "subgroup_size", "between 1 and 25"),
    ('subgroup_size = 100001\n', "subgroup_size", "between 1 and 100000"),
    ('result_column = "r"\nsubgroup_size = 5\nchart = "u"\n', "chart", "give proportions"),
    ('count_column = "d"\nchart = "u"\n', "chart", "units inspected"),
    ('size_column = "n"\n', "size_column", "go with the counts"),
    ('result_column = "r"\nsubgroup_size = 5\ncenter = 0.1\nsigma = 0.2\n', "sigma",
     "spread follows from its centre"),
    ('count_column = "d"\nchart = "np"\n', "chart", "an np chart needs the units"),
    ('count_column = "d"\nresult_column = "r"\n', "result_column", "exclude each other"),
    ('result_column = "r"\nsubgroup_size = 5\nfail_values = []\n', "fail_values", "at least one"),
    ('result_column = "r"\nsubgroup_size = 5\npass_values = ["Fail"]\n', "pass_values",
     "both a pass and a fail value"),
])
def test_a_misfit_names_the_file_the_key_and_why(body, key, words):
    with pytest.raises(ConfigError, match=re.escape(words)) as caught:
        _one(body)
    assert caught.value.path == "line.toml" and caught.value.key == f"characteristic.x.{key}"


@pytest.mark.parametrize(("given", "words"), [
    ({"subgroup_size": 5, "subgroup_by": "s"}, "--subgroup-size and --subgroup-by exclude"),
    ({"subgroup_window": "fortnight"}, "--subgroup-window: not a duration"),
    ({"subgroup_window": "30"}, "--subgroup-window: a duration needs a unit"),
    ({"count_column": "d", "result_column": "r"}, "--count and --result exclude"),
    ({"size_column": "n"}, "--size goes with --count"),
    ({"fail_values": " , "}, "--fail needs at least one value"),
    ({"subgroup_by": " "}, "--subgroup-by needs a column name"),
])
def test_impossible_options_are_refused_naming_the_option(given, words):
    with pytest.raises(LinewatchError, match=re.escape(words)):
        ChartOverrides(**given)


def test_one_way_of_subgrouping_on_the_command_line_replaces_the_configs():
    c = _one("subgroup_size = 5\n")
    by = apply_overrides(c, ChartOverrides(subgroup_by="sample"))
    assert (by.subgroup_size, by.subgroup_by) == (1, "sample")
    back = apply_overrides(_one('subgroup_by = "sample"\n'), ChartOverrides(subgroup_size=4))
    assert (back.subgroup_size, back.subgroup_by) == (4, None)


def test_counts_named_on_the_command_line_are_the_one_characteristic_charted():
    config = parse_config("", "line.toml")
    (c,) = select_characteristics(
        config, ChartOverrides(count_column="defects", size_column="units",
                               fail_values="x"), ["defects", "units", "speed"])
    assert (c.name, c.count_column, c.size_column, c.effective_chart) == (
        "defects", "defects", "units", "p")
    with pytest.raises(LinewatchError, match="defects: a u chart needs the units inspected"):
        select_characteristics(config, ChartOverrides(count_column="defects",
                                                      attribute_chart="u"), None)
