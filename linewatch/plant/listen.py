"""Waiting for the collectors' NOTIFY on the changes channel: no polling of the central
database for what changed."""

from __future__ import annotations

import threading
from collections.abc import Callable


def listen_for_changes(url: str, callback: Callable[[], None], stop: threading.Event,
                       retry: float) -> None:
    """Call `callback()` for each notification until `stop` is set; also once after (re)starting
    to listen, for what changed meanwhile, and once when the database went away (then again
    after `retry` seconds)."""
    import psycopg

    from linewatch.domain.errors import LinewatchError
    from linewatch.plant.central import connect
    from linewatch.plant.schema import CHANGES_CHANNEL

    while not stop.is_set():
        try:
            conn = connect(url, autocommit=True)
            try:
                conn.execute(f"LISTEN {CHANGES_CHANNEL}")
                callback()
                while not stop.is_set():
                    for _ in conn.notifies(timeout=1.0):
                        callback()
            finally:
                conn.close()
        except (psycopg.Error, LinewatchError, OSError):
            callback()
            stop.wait(retry)
