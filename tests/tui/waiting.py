"""Wait for what the screen's ~10 Hz refresh timer will draw, without guessing a pause that a
busy machine might outlast."""

from __future__ import annotations

import asyncio
from collections.abc import Callable
from typing import Any

from textual.pilot import Pilot


async def until(condition: Callable[[], bool], seconds: float = 10.0) -> None:
    """Wait until `condition` holds; fail (showing the condition once more) after `seconds`."""
    for _ in range(int(seconds / 0.05)):
        if condition():
            return
        await asyncio.sleep(0.05)
    assert condition()


async def settled(pilot: Pilot[Any]) -> None:
    """Wait until the keys pressed have had their effect: the screen's pending messages, the
    worker threads that carry reads and actions out, and the messages they posted back."""
    await pilot.pause()
    await pilot.app.workers.wait_for_complete()
    await pilot.pause()
