"""The store remembers how each characteristic is charted, for readers without the config."""

from __future__ import annotations

from linewatch.config.model import CharacteristicConfig
from linewatch.store.db import Store


def test_subgroup_size_and_dispersion_are_remembered(tmp_path):
    store = Store(tmp_path / "state")
    store.history.save_characteristics([
        CharacteristicConfig(name="od", column="od_mm", unit="mm", subgroup_size=5),
        CharacteristicConfig(name="wall", column="wall", subgroup_size=12),
        CharacteristicConfig(name="fill", column="fill_g"),
    ])
    od, wall, fill = (store.history.settings(n) for n in ("od", "wall", "fill"))
    assert (od.subgroup_size, od.dispersion, od.unit) == (5, "range", "mm")
    assert (wall.subgroup_size, wall.dispersion) == (12, "stdev")  # n >= 10: common practice
    assert (fill.subgroup_size, fill.dispersion) == (1, "range")
    assert store.schema_version >= 3  # the migration that added these columns
    store.close()
