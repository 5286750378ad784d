"""Where `monitor.audit_anchor_syslog` sends audit anchors, read from its text.

A config value like any other, so the config reader refuses a bad one naming the key; the store
opens the connection (`store.anchors`) from the address read here.
"""

from __future__ import annotations

import re

LOCAL_SYSLOG = "/dev/log"


def parse_syslog_target(text: str) -> str | tuple[str, int]:
    """Where `audit_anchor_syslog` sends: "local" (the daemon's /dev/log), an absolute path
    to a Unix socket, or HOST:PORT (IPv6 as [ADDR]:PORT) over UDP. ValueError says why not."""
    t = text.strip()
    if t == "local":
        return LOCAL_SYSLOG
    if t.startswith("/"):
        return t
    m = re.fullmatch(
        r"\[(?P<v6>[0-9A-Fa-f:.]+)\]:(?P<port>\d+)|(?P<host>[^\s:\[\]/]+):(?P<p>\d+)", t
    )
    if not m:
        raise ValueError(
            f"{text!r} is not a syslog destination: use \"local\" (/dev/log), the path of a "
            "Unix socket, or HOST:PORT for UDP (e.g. \"loghost.plant:514\")"
        )
    port = int(m["port"] or m["p"])
    if not 0 < port < 65536:
        raise ValueError(f"{text!r}: the port must be 1 to 65535")
    return (m["v6"] or m["host"], port)
