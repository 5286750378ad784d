"""`linewatch serve` without a browser: what it refuses before any screen is served (plain HTTP
from the standard library against the real server process)."""

from __future__ import annotations

import http.client
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import pytest

from tests.integration.serve.test_browser_view import free_port, linewatch


@pytest.fixture
def served(tmp_path: Path) -> Iterator[int]:
    (tmp_path / "a.csv").write_text("time,od\n2026-03-02T06:00:00+01:00,1.0\n")
    config = tmp_path / "line.toml"
    config.write_text(f'[[feed]]\npaths = ["{tmp_path}/a.csv"]\n')
    users = tmp_path / "users"
    assert linewatch("browser-user", "add", "maria", "--users", str(users), "--password-stdin",
                     stdin="long-enough\n").returncode == 0
    port = free_port()
    proc = subprocess.Popen([sys.executable, "-m", "linewatch", "serve", "-c", str(config),
                             "--state-dir", str(tmp_path / "state"), "--users", str(users),
                             "--bind", f"127.0.0.1:{port}"],
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline:
        try:
            socket.create_connection(("127.0.0.1", port), timeout=0.5).close()
            break
        except OSError:
            time.sleep(0.1)
    yield port
    proc.terminate()
    proc.wait(timeout=20)


def ask(port: int, method: str, path: str, body: str = "",
        headers: dict[str, str] | None = None) -> http.client.HTTPResponse:
    conn = http.client.HTTPConnection("127.0.0.1", port, timeout=20)
    conn.request(method, path, body=body, headers={
        "Content-Type": "application/x-www-form-urlencoded", **(headers or {})})
    return conn.getresponse()


def sign_in(port: int) -> str:
    answer = ask(port, "POST", "/sign-in", "user=maria&password=long-enough")
    assert answer.status == 302
    return answer.getheader("Set-Cookie", "").split(";")[0]


def test_nothing_is_served_before_signing_in(served: int) -> None:
    answer = ask(served, "GET", "/")
    assert answer.status == 302 and answer.getheader("Location") == "sign-in"
    assert ask(served, "GET", "/ws").status == 401
    assert ask(served, "POST", "/sign-in", "user=maria&password=wrong-one").status == 401


def test_a_signed_in_page_is_served_with_its_guards(served: int) -> None:
    cookie = sign_in(served)
    assert "HttpOnly" in ask(served, "POST", "/sign-in",
                             "user=maria&password=long-enough").getheader("Set-Cookie", "")
    answer = ask(served, "GET", "/", headers={"Cookie": cookie})
    page = answer.read().decode()
    assert answer.status == 200 and "signed in as maria" in page
    assert answer.getheader("X-Frame-Options") == "DENY"
    assert "googleapis" not in page  # nothing fetched from elsewhere


def test_a_websocket_from_another_sites_page_is_refused(served: int) -> None:
    cookie = sign_in(served)
    answer = ask(served, "GET", "/ws", headers={
        "Cookie": cookie, "Origin": "http://elsewhere.example", "Connection": "Upgrade",
        "Upgrade": "websocket", "Sec-WebSocket-Version": "13",
        "Sec-WebSocket-Key": "dGhlIHNhbXBsZSBub25jZQ=="})
    assert answer.status == 403


def test_acting_without_a_user_file_and_a_bad_bind_are_refused(tmp_path: Path) -> None:
    config = tmp_path / "line.toml"
    config.write_text("")
    out = linewatch("serve", "-c", str(config), "--allow-actions")
    assert out.returncode == 2 and "--allow-actions needs --users" in out.stderr
    out = linewatch("serve", "-c", str(config), "--bind", "localhost")
    assert out.returncode == 2 and "HOST:PORT" in out.stderr
    empty = tmp_path / "nobody"
    empty.write_text("# nobody yet\n")
    out = linewatch("serve", "-c", str(config), "--users", str(empty))
    assert out.returncode == 2 and "lists nobody" in out.stderr
