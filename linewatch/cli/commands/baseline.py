"""`linewatch baseline CHARACTERISTIC (--at INDEX | --now) --reason TEXT`: ask for a new phase of
limits from the shell, exactly as the close-up's new-baseline key does; the collector carries
it out (and audits it) on its next beat."""

from __future__ import annotations

from typing import TYPE_CHECKING

from linewatch.cli.options import BaselineOptions
from linewatch.domain.errors import LinewatchError
from linewatch.domain.safe_text import visible

if TYPE_CHECKING:
    from linewatch.store.db import Store


def run(options: BaselineOptions) -> int:
    """Check the request against the store, then leave it for the collector."""
    from linewatch.alarms.book import AlarmBook
    from linewatch.cli.commands._store_args import open_existing

    store, config = open_existing(options)
    try:
        name = options.characteristic
        known = AlarmBook(store, config).known_characteristics()
        if name not in known:
            listed = ", ".join(visible(k) for k in known) or "none yet"
            raise LinewatchError(f"no characteristic {visible(name)} (known: {listed})")
        reason = (options.reason or "").strip()
        if not reason:
            raise LinewatchError("--reason: a reason is required for a new baseline")
        plotted = _plotted_points(store, name)
        start = plotted if options.now or options.at is None else options.at
        if not 0 <= start <= plotted:
            raise LinewatchError(
                f"--at {start}: {visible(name)} has plotted points 0..{plotted - 1}; "
                f"a new phase can start at 0..{plotted} (--now: {plotted})"
            )
        store.requests.ask(name, start, reason)
        print(f"new baseline for {visible(name)} from point {start} asked for; the collector "
              f"sets it on its next beat")
        return 0
    finally:
        store.close()


def _plotted_points(store: Store, name: str) -> int:
    """Plotted points of the characteristic so far (readings / subgroup size)."""
    rows = store.query("SELECT COUNT(*) FROM points WHERE characteristic = ?", (name,))
    readings = int(rows[0][0])
    settings = store.history.settings(name)
    n = settings.subgroup_size if settings is not None and settings.subgroup_size else 1
    return readings // n
