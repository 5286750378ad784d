"""The syslog destination of audit anchors, read from its config text (RFC 3164 transports:
the local daemon's socket, a Unix socket path, or UDP to HOST:PORT; common practice)."""

from __future__ import annotations

import pytest

from linewatch.config.syslog_target import parse_syslog_target


def test_targets_local_socket_and_host_port() -> None:
    assert parse_syslog_target("local") == "/dev/log"
    assert parse_syslog_target("/run/systemd/journal/syslog") == "/run/systemd/journal/syslog"
    assert parse_syslog_target("loghost.plant:514") == ("loghost.plant", 514)
    assert parse_syslog_target("[::1]:5514") == ("::1", 5514)
    for bad in ("loghost", "loghost:0", "loghost:99999", "udp://x:1", ""):
        with pytest.raises(ValueError):
            parse_syslog_target(bad)
