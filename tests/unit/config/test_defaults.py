"""A key left out of a config file takes the default its field declares in the model, and the
keys a table knows are its record's fields: the reader repeats no default and no key list."""

from __future__ import annotations

import dataclasses
import hashlib
import re

import pytest

from linewatch.config.choices import DECIMAL_MARKS, DISPERSIONS, LAYOUTS
from linewatch.config.fields import field_default
from linewatch.config.loading import parse_config
from linewatch.config.model import (
    AlarmConfig,
    CharacteristicConfig,
    Config,
    FeedConfig,
    MonitorConfig,
)
from linewatch.domain.errors import ConfigError


def test_an_empty_file_is_the_models_defaults():
    expected = Config(source="x.toml", digest=hashlib.sha256(b"").hexdigest())
    assert parse_config("", "x.toml") == expected
    assert parse_config("[monitor]\n[alarms]\n", "x.toml").monitor == MonitorConfig()
    assert parse_config("[alarms]\n", "x.toml").alarms == AlarmConfig()


def test_a_feed_with_only_its_paths_has_the_models_defaults():
    (feed,) = parse_config("[[feed]]\npaths = ['a.csv']\n", "x.toml").feeds
    assert feed == FeedConfig(paths=["a.csv"])


def test_a_characteristic_with_only_its_name_has_the_models_defaults():
    (c,) = parse_config("[[characteristic]]\nname = 'od'\n", "x.toml").characteristics
    assert c == CharacteristicConfig(name="od", column="od")


def test_a_characteristic_inherits_the_reasons_of_its_alarms_table():
    text = "[alarms]\nreasons = ['worn insert']\n[[characteristic]]\nname = 'od'\n"
    (c,) = parse_config(text, "x.toml").characteristics
    assert c.reasons == ["worn insert"]


def test_an_empty_text_setting_means_its_default():
    text = "[[feed]]\npaths = ['a']\nname_column = ''\ndelimiter = ''\nencoding = ''\n"
    (feed,) = parse_config(text, "x.toml").feeds
    for name in ("name_column", "delimiter", "encoding"):
        assert getattr(feed, name) == field_default(FeedConfig, name)


@pytest.mark.parametrize(
    ("table", "record"),
    [("[monitor]", MonitorConfig), ("[alarms]", AlarmConfig),
     ("[[feed]]\npaths = ['a']", FeedConfig), ("[[characteristic]]\nname = 'x'",
                                               CharacteristicConfig)],
)
def test_the_known_keys_are_the_records_fields(table, record):
    with pytest.raises(ConfigError) as err:
        parse_config(f"{table}\nbogus = 1\n", "x.toml")
    listed = err.value.problem.split("(known: ")[1].rstrip(")").split(", ")
    assert listed == sorted(f.name for f in dataclasses.fields(record))


@pytest.mark.parametrize(
    ("key", "choices", "table"),
    [("layout", LAYOUTS, "[[feed]]\npaths = ['a']"),
     ("decimal", DECIMAL_MARKS, "[[feed]]\npaths = ['a']"),
     ("dispersion", DISPERSIONS, "[[characteristic]]\nname = 'x'")],
)
def test_a_closed_set_accepts_each_of_its_words_and_names_them_when_refusing(key, choices, table):
    for word in choices:
        parse_config(f"{table}\n{key} = {word!r}\n", "x.toml")
    with pytest.raises(ConfigError) as err:
        parse_config(f"{table}\n{key} = 'sideways'\n", "x.toml")
    assert err.value.key.endswith(key)
    assert f"must be one of {', '.join(choices)}" in err.value.problem


# TOML values of every kind, well-formed and not, for the sweep below
ANY_VALUES = ["1", "-1", "0", "2.5", "nan", "inf", "1e308", "99999999999", "true", "'x'", "''",
              "'auto'", "'range'", "'jsonl'", "'1h'", "'-5s'", "[]", "['a']", "[1]", "[[1]]",
              "{}", "{ a = 1 }", "{ we1 = 'x' }", "1979-05-27"]
TABLES = [("[monitor]\n", MonitorConfig), ("[alarms]\n", AlarmConfig),
          ("[[feed]]\npaths = ['a']\n", FeedConfig),
          ("[[characteristic]]\nname = 'x'\n", CharacteristicConfig)]


@pytest.mark.parametrize(("head", "record"), TABLES, ids=[r.__name__ for _, r in TABLES])
def test_any_value_of_any_key_is_taken_or_refused_naming_that_key(head, record):
    """Never a crash: a value is read, or refused with a ConfigError that names the key (or,
    for center/sigma, the partner it lacks)."""
    partners = {"center": "sigma", "sigma": "center"}
    for f in dataclasses.fields(record):
        lines = [line for line in head.splitlines() if not line.startswith(f"{f.name} =")]
        for value in ANY_VALUES:
            text = "\n".join([*lines, f"{f.name} = {value}", ""])
            try:
                parse_config(text, "x.toml")
            except ConfigError as err:
                parts = re.split(r"[.\[]", err.key)
                assert f.name in parts or partners.get(f.name) in parts, (text, err)
