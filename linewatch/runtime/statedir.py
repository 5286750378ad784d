"""Where the store of a line lives: `--state-dir` if given, else the config's `monitor.state_dir`,
else a folder in the user state directory named after the config file (so two lines watched by
one user keep separate alarms), or `default` without a config."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path
from typing import TYPE_CHECKING

from linewatch.domain.errors import LinewatchError

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.db import Store


def default_name(config: Config | None) -> str:
    """`<config stem>-<8 hex of the resolved path>`, or `default` without a config file."""
    if config is None or not config.source or config.source.startswith("<"):
        return "default"
    path = Path(config.source).expanduser().resolve()
    stem = re.sub(r"[^A-Za-z0-9_.-]+", "_", path.stem) or "config"
    return f"{stem}-{hashlib.sha256(str(path).encode('utf-8')).hexdigest()[:8]}"


def resolve_state_dir(explicit: str | None, config: Config | None) -> Path:
    """The state directory to use (not created here)."""
    if explicit:
        return Path(explicit).expanduser()
    if config is not None and config.monitor.state_dir:
        return Path(config.monitor.state_dir).expanduser()
    from platformdirs import user_state_dir

    return Path(user_state_dir("linewatch")) / default_name(config)


def open_store(path: str | Path, create: bool, shared_group: bool = False) -> Store:
    """Open the store in `path`. With create=False (the shell commands) a folder without a store
    is a user error: "... is not a linewatch state directory"."""
    from linewatch.store.db import Store

    p = Path(path)
    if not create and p.exists() and not p.is_dir():
        raise LinewatchError(f"{p} is not a linewatch state directory (not a folder)")
    return Store(p, create=create, shared_group=shared_group)
