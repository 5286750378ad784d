"""Audit anchors sent to syslog, read back from a real UDP socket standing in for the log host.

Framing per RFC 3164 (BSD syslog) section 4.1: `<PRI>TAG: MSG`, PRI = facility * 8 + severity;
facility user is 1 and severity notice is 5, so PRI is 13."""

from __future__ import annotations

import socket
from collections.abc import Iterator
from pathlib import Path

import pytest

from linewatch.store.anchors import (
    Anchorer,
    AnchorSinks,
    parse_anchors,
    store_key,
)
from linewatch.store.db import Store


@pytest.fixture
def loghost() -> Iterator[socket.socket]:
    """A UDP socket on 127.0.0.1 that receives what a syslog daemon would."""
    sock = socket.socket(socket.AF_INET, socket.SOCK_DGRAM)
    sock.bind(("127.0.0.1", 0))
    sock.settimeout(5.0)
    yield sock
    sock.close()


def received(sock: socket.socket, count: int) -> list[str]:
    return [sock.recvfrom(65536)[0].decode("utf-8") for _ in range(count)]


def test_each_anchor_is_one_user_notice_datagram(store: Store, loghost: socket.socket) -> None:
    store.audit.append("config-loaded", "line.toml", {"sha256": "0" * 64})
    port = loghost.getsockname()[1]
    anchorer = Anchorer(store, AnchorSinks(syslog=f"127.0.0.1:{port}"), every=2)
    assert anchorer.write("report") is None
    assert anchorer.maybe() is None  # 1 entry since: not yet
    store.audit.append("config-loaded", "line.toml", {"sha256": "1" * 64})
    store.audit.append("config-loaded", "line.toml", {"sha256": "2" * 64})
    assert anchorer.maybe() is None  # 2 more: an anchor
    first, second = received(loghost, 2)
    assert first.startswith("<13>linewatch-audit: linewatch-audit-anchor v1 entries=1 ")
    assert "\x00" not in first and "why=report" in first and "why=every" in second
    entries, head = store.audit.head()
    (anchor,) = parse_anchors(second)
    assert (anchor.entries, anchor.head, anchor.store) == (
        entries, head, store_key(store.directory))
    # what the log host kept is an anchor file for `verify`
    assert store.audit.verify(parse_anchors(first + "\n" + second)).checks == "chain + anchors"


def test_no_syslog_daemon_is_a_reported_problem_and_the_file_still_gets_the_anchor(
    store: Store, tmp_path: Path, capsys: pytest.CaptureFixture[str],
) -> None:
    sinks = AnchorSinks(str(tmp_path / "anchors.log"), str(tmp_path / "no-such-socket"))
    problem = Anchorer(store, sinks, every=0).write("stop")
    assert problem is not None and "cannot send the audit anchor to syslog" in problem
    assert "no-such-socket" in problem
    assert "why=stop" in (tmp_path / "anchors.log").read_text()
    assert capsys.readouterr().err == ""  # no logging traceback on the way


def test_a_daemon_that_comes_back_gets_the_next_anchor(store: Store, tmp_path: Path) -> None:
    path = tmp_path / "log.sock"
    anchorer = Anchorer(store, AnchorSinks(syslog=str(path)), every=0)
    assert anchorer.write("report") is not None  # not there yet
    daemon = socket.socket(socket.AF_UNIX, socket.SOCK_DGRAM)
    daemon.bind(str(path))
    daemon.settimeout(5.0)
    try:
        assert anchorer.write("stop") is None
        assert "why=stop" in daemon.recv(65536).decode()
    finally:
        daemon.close()
