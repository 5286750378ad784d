"""What the plant board draws (imported by the faces): the source of the line records of
`plant.overview`, each a plain dict. `present.plant_face` builds it over the central database."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any, Protocol


class PlantSource(Protocol):
    """The lines of the plant (`plant.overview` records); `lines()` may wait for the database,
    so a screen calls it from a worker thread. `subscribe(callback)` calls `callback()` from
    another thread whenever something may have changed."""

    def lines(self) -> list[dict[str, Any]]: ...

    def subscribe(self, callback: Callable[[], None]) -> None: ...
