"""What the plant board draws: the central database's line records, and a callback whenever a
line's rows change there (LISTEN on the channel the collectors NOTIFY after each batch; no
polling). Builds on `plant.overview`; the face sees only `PlantSource`."""

from __future__ import annotations

import threading
import time
from collections.abc import Callable
from typing import Any

RETRY_SECONDS = 2.0  # between tries to listen again after the central database went away


class CentralFace:
    """A `present.plant_view.PlantSource` over the central database at `url`."""

    def __init__(self, url: str) -> None:
        self.url = url
        self._stop = threading.Event()

    def lines(self) -> list[dict[str, Any]]:
        from linewatch.plant.central import require_current, session
        from linewatch.plant.overview import line_records

        with session(self.url) as conn:
            require_current(conn, self.url)
            return line_records(conn, time.time())

    def subscribe(self, callback: Callable[[], None]) -> None:
        threading.Thread(target=self._listen, args=(callback,), name="plant-listen",
                         daemon=True).start()

    def _listen(self, callback: Callable[[], None]) -> None:
        from linewatch.plant.listen import listen_for_changes

        listen_for_changes(self.url, callback, self._stop, RETRY_SECONDS)

    def close(self) -> None:
        self._stop.set()
