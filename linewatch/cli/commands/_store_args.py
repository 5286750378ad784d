"""Shared by the shell commands that work on an existing store: find it from --state-dir / -c."""

from __future__ import annotations

import argparse
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from linewatch.config.model import Config
    from linewatch.store.db import Store


def open_existing(args: argparse.Namespace) -> tuple[Store, Config | None]:
    """The store named by --state-dir (or the config's), never created by a shell command."""
    from linewatch.runtime.statedir import open_store, resolve_state_dir

    config = None
    if getattr(args, "config", None):
        from linewatch.config.loading import load_config

        config = load_config(args.config)
    directory = resolve_state_dir(getattr(args, "state_dir", None), config)
    store = open_store(directory, create=False)
    if config is not None:  # its audit key signs what this command writes
        from linewatch.store.anchors import configure_audit

        try:
            configure_audit(store, config.monitor, config.source)
        except BaseException:
            store.close()
            raise
    return store, config
