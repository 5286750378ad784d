"""Where the store lives: --state-dir, then the config, then the user state directory."""

from __future__ import annotations

from pathlib import Path

import platformdirs

from linewatch.config.loading import load_config, parse_config
from linewatch.runtime.statedir import default_name, resolve_state_dir


def test_explicit_directory_wins(tmp_path: Path) -> None:
    config = parse_config('[monitor]\nstate_dir = "/elsewhere"\n', "x.toml")
    assert resolve_state_dir(str(tmp_path / "mine"), config) == tmp_path / "mine"


def test_config_state_dir_is_taken_relative_to_the_config(tmp_path: Path) -> None:
    (tmp_path / "line.toml").write_text('[monitor]\nstate_dir = "state"\n')
    config = load_config(tmp_path / "line.toml")
    assert resolve_state_dir(None, config) == tmp_path.resolve() / "state"


def test_default_is_per_config_in_the_user_state_dir(tmp_path: Path) -> None:
    (tmp_path / "a").mkdir()
    (tmp_path / "b").mkdir()
    (tmp_path / "a" / "line.toml").write_text("")
    (tmp_path / "b" / "line.toml").write_text("")
    a = resolve_state_dir(None, load_config(tmp_path / "a" / "line.toml"))
    b = resolve_state_dir(None, load_config(tmp_path / "b" / "line.toml"))
    base = Path(platformdirs.user_state_dir("linewatch"))
    assert a.parent == base and b.parent == base
    assert a != b  # two lines (two configs with the same name) keep separate stores
    assert a.name.startswith("line-") and len(a.name) == len("line-") + 8
    assert resolve_state_dir(None, None) == base / "default"
    assert default_name(parse_config("", "<config>")) == "default"
