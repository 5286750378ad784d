"""The screen served to a real browser: the system's headless Chromium, driven by Selenium
through the system's chromedriver (nothing downloaded). A real `linewatch serve` process, a
real screen process per browser, a real log with one far point and a real store.

What the browser receives is read from its own websocket frames (a page script records them
before the page's code runs), so "the board shows" means the board's drawing reached the
browser, not that the server sent it somewhere. Keys are typed into the page's terminal as a
person would type them.
"""

from __future__ import annotations

import json
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
from collections.abc import Iterator
from pathlib import Path

import pytest

CHROMIUM = "/usr/bin/chromium"
CHROMEDRIVER = "/usr/bin/chromedriver"
PASSWORD = "wool-and-steel-7"
WAIT = 60.0

pytestmark = pytest.mark.timeout(240)

# Records every binary frame the page receives, decoded as text, before textual.js runs.
RECORDER = """
window.__seen = [];
const Native = window.WebSocket;
window.WebSocket = function (url, protocols) {
  const ws = protocols === undefined ? new Native(url) : new Native(url, protocols);
  ws.addEventListener('message', (e) => {
    if (typeof e.data !== 'string') {
      window.__seen.push(new TextDecoder().decode(new Uint8Array(e.data)));
    }
  });
  return ws;
};
window.WebSocket.prototype = Native.prototype;
Object.assign(window.WebSocket, Native);
"""


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def linewatch(*args: str, stdin: str | None = None) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "linewatch", *args], input=stdin,
                          capture_output=True, text=True, timeout=60, check=False)


@pytest.fixture
def line(tmp_path: Path) -> Path:
    """A log of 60 readings of `bore-dia` with one far point (a beyond-limits alarm)."""
    rows = ["time,bore-dia"]
    for i in range(60):
        value = 10 + 0.01 * ((i * 7) % 5 - 2) + (1.0 if i == 50 else 0.0)
        rows.append(f"2026-03-02T06:{i:02d}:00+01:00,{value:.3f}")
    (tmp_path / "bore.csv").write_text("\n".join(rows) + "\n")
    config = tmp_path / "line.toml"
    config.write_text(f'[[feed]]\npaths = ["{tmp_path}/bore.csv"]\n')
    return config


class Served:
    """A running `linewatch serve` on a free port."""

    def __init__(self, config: Path, *extra: str) -> None:
        self.port = free_port()
        self.state = config.parent / "state"
        self.url = f"http://127.0.0.1:{self.port}/"
        self.proc = subprocess.Popen(
            [sys.executable, "-m", "linewatch", "serve", "-c", str(config), "--state-dir",
             str(self.state), "--bind", f"127.0.0.1:{self.port}", *extra],
            stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)
        deadline = time.monotonic() + WAIT
        while time.monotonic() < deadline:
            try:
                socket.create_connection(("127.0.0.1", self.port), timeout=0.5).close()
                return
            except OSError:
                assert self.proc.poll() is None, self.proc.communicate()[0]
                time.sleep(0.1)
        raise AssertionError("the server did not start")

    def screens(self) -> list[int]:
        """Process ids of the screens this server started (its children)."""
        import psutil

        return [c.pid for c in psutil.Process(self.proc.pid).children(recursive=True)]

    def stop(self) -> str:
        import psutil

        children = [psutil.Process(p) for p in self.screens()]
        self.proc.terminate()
        try:
            out, _ = self.proc.communicate(timeout=20)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            out, _ = self.proc.communicate()
        _gone, alive = psutil.wait_procs(children, timeout=15)
        for p in alive:
            p.kill()
        assert alive == [], "a screen outlived the server"
        return out

    def audit(self) -> list[dict[str, object]]:
        out = linewatch("audit", "export", "--state-dir", str(self.state))
        assert out.returncode == 0, out.stderr
        return [json.loads(line) for line in out.stdout.splitlines() if line.strip()]


@pytest.fixture
def browser() -> Iterator[object]:
    assert os.path.exists(CHROMIUM) and os.path.exists(CHROMEDRIVER), (
        "this test needs the system's Chromium: apt-get install chromium chromium-driver")
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    profile = tempfile.mkdtemp(prefix="lw-chromium-")
    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run",
                 "--disable-dev-shm-usage", "--window-size=1280,800",
                 f"--user-data-dir={profile}"):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    driver.execute_cdp_cmd("Page.addScriptToEvaluateOnNewDocument", {"source": RECORDER})
    try:
        yield driver
    finally:
        driver.quit()
        shutil.rmtree(profile, ignore_errors=True)


def seen(driver: object) -> str:
    return "".join(driver.execute_script("return window.__seen || []"))  # type: ignore[attr-defined]


def wait_for_text(driver: object, text: str, after: int = 0) -> None:
    deadline = time.monotonic() + WAIT
    while time.monotonic() < deadline:
        if text in seen(driver)[after:]:
            return
        time.sleep(0.2)
    raise AssertionError(f"{text!r} never reached the browser; it got: {seen(driver)[-3000:]!r}")


def type_keys(driver: object, *keys: str) -> None:
    from selenium.webdriver.common.by import By

    box = driver.find_element(By.CSS_SELECTOR, ".xterm-helper-textarea")  # type: ignore[attr-defined]
    for key in keys:
        box.send_keys(key)
        time.sleep(0.4)


def acknowledge_first_alarm(driver: object) -> int:
    """Open the alarm queue and acknowledge the top alarm with the first reason, as a person
    would: a, Enter, 1, Enter. Returns how much the browser had seen before the last key."""
    from selenium.webdriver.common.keys import Keys

    type_keys(driver, "a")
    wait_for_text(driver, "outside the control limits")
    type_keys(driver, Keys.ENTER, "1")
    before = len(seen(driver))
    type_keys(driver, Keys.ENTER)
    return before


def acknowledgements(served: Served) -> list[dict[str, object]]:
    return [e for e in served.audit() if e.get("action") == "acknowledged"]


def test_without_actions_the_board_shows_and_an_acknowledgement_is_refused(
        line: Path, browser: object) -> None:
    served = Served(line)
    try:
        browser.get(served.url)  # type: ignore[attr-defined]
        wait_for_text(browser, "bore-dia")  # the board's row of the characteristic
        assert len(served.screens()) == 1  # one screen process for the one browser
        from selenium.webdriver.common.by import By

        header = browser.find_element(By.ID, "who").text  # type: ignore[attr-defined]
        assert "read-only" in header  # the page says what the view may do
        after = acknowledge_first_alarm(browser)
        wait_for_text(browser, "acting is off", after)
        assert acknowledgements(served) == []
    finally:
        served.stop()


def test_sign_in_refuses_a_wrong_password_and_a_right_one_acts_as_that_user(
        line: Path, browser: object) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.expected_conditions import presence_of_element_located
    from selenium.webdriver.support.wait import WebDriverWait

    users = line.parent / "users"
    made = linewatch("browser-user", "add", "maria", "--users", str(users), "--password-stdin",
                     stdin=PASSWORD + "\n")
    assert made.returncode == 0, made.stderr
    assert PASSWORD not in users.read_text()  # a hash, never the password
    served = Served(line, "--users", str(users), "--allow-actions")
    try:
        browser.get(served.url)  # type: ignore[attr-defined]
        assert browser.current_url.endswith("/sign-in")  # type: ignore[attr-defined]
        assert seen(browser) == ""  # no screen before signing in
        browser.find_element(By.ID, "user").send_keys("maria")  # type: ignore[attr-defined]
        browser.find_element(By.ID, "password").send_keys("not-her-password")  # type: ignore[attr-defined]
        browser.find_element(By.ID, "sign-in").click()  # type: ignore[attr-defined]
        # the refusal page comes after the password is hashed and checked: wait for it
        problem = WebDriverWait(browser, WAIT).until(  # type: ignore[arg-type]
            presence_of_element_located((By.ID, "problem"))).text
        assert "do not match" in problem
        assert seen(browser) == ""

        browser.find_element(By.ID, "password").send_keys(PASSWORD)  # type: ignore[attr-defined]
        browser.find_element(By.ID, "sign-in").click()  # type: ignore[attr-defined]
        wait_for_text(browser, "bore-dia")
        acknowledge_first_alarm(browser)
        deadline = time.monotonic() + WAIT
        while not (done := acknowledgements(served)) and time.monotonic() < deadline:
            time.sleep(0.3)
        assert len(done) == 1
        assert done[0]["actor"] == "maria@127.0.0.1"
        payload = done[0]["payload"]
        payload = json.loads(payload) if isinstance(payload, str) else payload
        assert payload["from"] == "127.0.0.1"  # type: ignore[index]
    finally:
        log = served.stop()
    assert "sign-in refused for 'maria' from 127.0.0.1" in log
    assert "maria signed in from 127.0.0.1" in log
    assert PASSWORD not in log
