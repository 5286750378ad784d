"""Where the central database is, and how its address is shown: never with a password.

The URL comes from `LINEWATCH_PLANT_URL` when that is set (so a password need not sit in a
config file), else from the config's `[plant] url`. libpq's own sources of a password
(PGPASSWORD, ~/.pgpass) work as usual. Whatever is printed, logged, audited or shown on a
screen goes through `redact` (or `redact_text` for an error message that may quote it).
"""

from __future__ import annotations

import os
import re
from urllib.parse import urlsplit, urlunsplit

ENV_URL = "LINEWATCH_PLANT_URL"
HIDDEN = "***"
_SCHEMES = ("postgresql", "postgres")
_CONNINFO_PASSWORD = re.compile(r"(password\s*=\s*)('(?:[^'\\]|\\.)*'|\S+)", re.IGNORECASE)
_QUERY_PASSWORD = re.compile(r"([?&]password=)[^&#]*", re.IGNORECASE)


def plant_url(configured: str | None, env: dict[str, str] | None = None) -> str | None:
    """The central database's URL: the environment variable, else the config's; None: no
    plant link."""
    env = dict(os.environ) if env is None else env
    given = env.get(ENV_URL, "").strip()
    return given or (configured.strip() if configured and configured.strip() else None)


def is_plant_url(url: str) -> bool:
    """True for a postgresql:// (or postgres://) URL or a libpq key=value string."""
    scheme = url.split(":", 1)[0].lower() if "://" in url else ""
    return scheme in _SCHEMES or ("=" in url and "://" not in url)


def redact(url: str) -> str:
    """`url` with any password replaced by ***: in the user part, in a `password=` query
    parameter, or in a key=value connection string."""
    if "://" not in url:
        return _CONNINFO_PASSWORD.sub(lambda m: m.group(1) + HIDDEN, url)
    try:
        parts = urlsplit(url)
    except ValueError:
        return HIDDEN
    netloc = parts.netloc
    if "@" in netloc:
        userinfo, _, hostport = netloc.rpartition("@")
        user, colon, _password = userinfo.partition(":")
        netloc = f"{user}{':' + HIDDEN if colon else ''}@{hostport}"
    query = _QUERY_PASSWORD.sub(lambda m: m.group(1) + HIDDEN, "?" + parts.query)[1:]
    return urlunsplit((parts.scheme, netloc, parts.path, query, parts.fragment))


def password_of(url: str) -> str | None:
    """The password written in `url`, if any (to scrub it from messages)."""
    if "://" not in url:
        m = _CONNINFO_PASSWORD.search(url)
        return m.group(2).strip("'") if m else None
    try:
        parts = urlsplit(url)
    except ValueError:
        return None
    if parts.password:
        return parts.password
    m = re.search(r"(?:^|&)password=([^&#]*)", parts.query, re.IGNORECASE)
    return m.group(1) if m else None


def redact_text(text: str, url: str | None) -> str:
    """An error message with the URL's password (and any URL it quotes) hidden."""
    if url:
        secret = password_of(url)
        if secret:
            text = text.replace(secret, HIDDEN)
            from urllib.parse import unquote

            text = text.replace(unquote(secret), HIDDEN)
    return re.sub(r"postgres(?:ql)?://\S+", lambda m: redact(m.group(0)), text)
