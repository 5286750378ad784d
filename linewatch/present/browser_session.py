"""A screen served to a browser: who is looking, from where, and whether they may act.

`linewatch serve` starts one screen process per browser connection and tells it, through its
environment, the signed-in user (if any), the browser's address and whether acting is on. The
screen then acts as that user (audited with their name and address) or refuses every action.
Anyone who can start processes as the serving OS user can also write the store directly, so
the environment is trusted as far as the store's own file permissions are.
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import dataclass

from linewatch.domain.errors import LinewatchError

USER_VAR = "LINEWATCH_BROWSER_USER"
ADDRESS_VAR = "LINEWATCH_BROWSER_ADDRESS"
ACTIONS_VAR = "LINEWATCH_BROWSER_ACTIONS"
READ_ONLY = ("this browser view only shows the line: acting is off (the server was started "
             "without --allow-actions)")
READ_ONLY_TITLE = "read-only"


@dataclass(frozen=True, slots=True)
class BrowserSession:
    """The browser a screen is served to."""

    address: str
    user: str | None = None  # None: the server asks nobody to sign in
    actions: bool = False  # acting is on (only ever with a signed-in user)

    def environment(self) -> dict[str, str]:
        """The variables the screen process reads back with `browser_session`."""
        env = {ADDRESS_VAR: self.address, ACTIONS_VAR: "on" if self.acting else "off"}
        if self.user:
            env[USER_VAR] = self.user
        return env

    @property
    def acting(self) -> bool:
        return self.actions and bool(self.user)


def browser_session(env: Mapping[str, str] | None = None) -> BrowserSession | None:
    """The browser this process serves, or None for a screen in a terminal."""
    env = os.environ if env is None else env
    address = env.get(ADDRESS_VAR)
    if not address:
        return None
    return BrowserSession(address=address, user=env.get(USER_VAR) or None,
                          actions=env.get(ACTIONS_VAR) == "on")


class ReadOnlyActions:
    """The `LineActions` of a browser view without acting: every call is refused, in words."""

    def acknowledge(self, alarm_ids: list[int], reason: str, note: str = "") -> None:
        raise LinewatchError(READ_ONLY)

    def acknowledge_characteristic(self, characteristic: str, reason: str, note: str = "") -> int:
        raise LinewatchError(READ_ONLY)

    def shelve(self, alarm_id: int, seconds: float, reason: str) -> None:
        raise LinewatchError(READ_ONLY)

    def unshelve(self, alarm_id: int) -> None:
        raise LinewatchError(READ_ONLY)

    def new_baseline(self, characteristic: str, start_index: int, reason: str) -> None:
        raise LinewatchError(READ_ONLY)
