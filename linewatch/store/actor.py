"""Who is acting: the operating-system user and, in an SSH session, the client's address.

Recorded with every acknowledgement and audit entry, because the audit question is "who saw what,
when, from where".
"""

from __future__ import annotations

import getpass
import os
from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class Actor:
    """A person (or the collector itself) doing something to the store."""

    user: str
    address: str | None = None

    def __str__(self) -> str:
        return f"{self.user}@{self.address}" if self.address else self.user


def ssh_client_address(env: dict[str, str] | None = None) -> str | None:
    """The SSH client's IP from SSH_CLIENT or SSH_CONNECTION ("ip port ..."), if any."""
    env = dict(os.environ) if env is None else env
    for name in ("SSH_CLIENT", "SSH_CONNECTION"):
        parts = env.get(name, "").split()
        if parts:
            return parts[0]
    return None


def os_user() -> str:
    """The login name of the operating-system user running this process."""
    try:
        return getpass.getuser()
    except (KeyError, OSError):  # no passwd entry and no LOGNAME/USER (containers)
        return f"uid{os.getuid()}"


def who(env: dict[str, str] | None = None) -> Actor:
    """The actor of this process."""
    return Actor(os_user(), ssh_client_address(env))


def current_actor() -> str:
    """The actor of this process as text: `user` or `user@address`."""
    return str(who())
