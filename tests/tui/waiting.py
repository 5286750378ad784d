"""Wait for what the screen's ~10 Hz refresh timer will draw, without guessing a pause that a
busy machine might outlast."""

from __future__ import annotations

import asyncio
from collections.abc import Callable


async def until(condition: Callable[[], bool], seconds: float = 10.0) -> None:
    """Wait until `condition` holds; fail (showing the condition once more) after `seconds`."""
    for _ in range(int(seconds / 0.05)):
        if condition():
            return
        await asyncio.sleep(0.05)
    assert condition()
