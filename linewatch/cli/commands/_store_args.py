"""Shared by the shell commands that work on an existing store: find it from --state-dir / -c."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from linewatch.cli.options import StoreOptions
    from linewatch.config.model import Config
    from linewatch.store.db import Store


def open_existing(options: StoreOptions) -> tuple[Store, Config | None]:
    """The store named by --state-dir (or the config's), never created by a shell command."""
    from linewatch.runtime.statedir import open_store, resolve_state_dir

    config = None
    if options.config:
        from linewatch.config.loading import load_config

        config = load_config(options.config)
    directory = resolve_state_dir(options.state_dir, config)
    store = open_store(directory, create=False)
    if config is not None:  # its audit key signs what this command writes
        from linewatch.store.anchors import configure_audit

        try:
            configure_audit(store, config.monitor, config.source)
        except BaseException:
            store.close()
            raise
    return store, config
