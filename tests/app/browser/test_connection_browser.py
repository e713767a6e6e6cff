"""The page under its security policy, and a tab that notices when its server is gone.

The policy must not block anything the app needs: a violation shows in the browser's console
(Chromium reports "Refused to ... because it violates the following Content Security Policy
directive"), so the console must have none after the demo is drawn and a file is uploaded.
"""

from __future__ import annotations

import socket
import threading
from pathlib import Path

import pytest

from .page import comparison_rows, text, upload, wait, wait_idle

pytestmark = pytest.mark.browser
ROOT = Path(__file__).resolve().parents[3]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture
def own_server():
    """A server of this test's own, so that it can be stopped while the tab stays open."""
    from waitress import create_server

    from growthcore.app.server import create_app

    app = create_app()
    port = free_port()
    server = create_server(app.server, host="127.0.0.1", port=port, threads=6)
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{port}/", server
    server.close()


def open_app(driver, url: str) -> None:
    driver.get(url)
    wait(driver, lambda d: len(comparison_rows(d)) >= 4)
    wait_idle(driver)


def _csp_violations(driver) -> list[str]:
    return [e["message"] for e in driver.get_log("browser") if "Content Security Policy" in e["message"]]


def test_no_policy_violations(make_driver, server_url) -> None:
    driver = make_driver(1280, 900, browser_log=True)
    open_app(driver, server_url)
    upload(driver, str(ROOT / "sample_data" / "island_census.csv"))
    wait(driver, lambda d: "island_census.csv" in text(d, "data-message"))
    wait_idle(driver)
    assert _csp_violations(driver) == []


def test_tab_marks_everything_stale_when_the_server_stops(make_driver, own_server) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    url, server = own_server
    driver = make_driver(1280, 900)
    open_app(driver, url)
    assert driver.execute_script("return document.body.classList.contains('server-lost')") is False
    # as a stopped process does: the listening socket and every open connection closed (closing the
    # listener alone would leave the tab's kept-alive connection open, with requests never answered)
    for channel in list(server._map.values()):
        channel.close()
    server.close()
    box = driver.find_element(By.ID, "model-k-input")
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("7.5", Keys.ENTER)
    wait(driver, lambda d: d.execute_script("return document.body.classList.contains('server-lost')"))
    message = text(driver, "connection-banner")
    assert "The server is not answering" in message and "stale" in message
