"""Small page helpers shared by the browser tests: waits, reads, uploads, scrolling, screenshots.

Plain functions of a selenium driver. Files that wait longer or poll faster than the defaults bind
their own values once with functools.partial, so each call site stays as short as before.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from typing import Any

#: Seconds a wait may take, and seconds between two looks, unless a test file says otherwise.
WAIT = 25.0
POLL = 0.1


def wait(driver: Any, condition: Callable[[Any], Any], timeout: float = WAIT, poll: float = POLL) -> Any:
    """Until ``condition(driver)`` is truthy; its value is returned."""
    from selenium.webdriver.support.ui import WebDriverWait

    return WebDriverWait(driver, timeout, poll_frequency=poll).until(condition)


def text(driver: Any, element_id: str) -> str:
    """innerText read in one script call, so a re-render between lookups cannot go stale."""
    return driver.execute_script(f"var e = document.getElementById('{element_id}'); return e ? e.innerText : '';")


def comparison_rows(driver: Any) -> list[str]:
    """The comparison table's body rows, each as its tab-separated innerText."""
    return driver.execute_script(
        "return Array.from(document.querySelectorAll('#comparison-table tbody tr')).map(r => r.innerText);")


def wait_idle(driver: Any, timeout: float = WAIT, poll: float = POLL) -> None:
    """Until Dash has no request in flight (the renderer marks loading components)."""
    time.sleep(0.3)
    wait(driver, lambda d: d.execute_script("return document.querySelectorAll('[data-dash-is-loading]').length") == 0,
         timeout, poll)


def open_demo(driver: Any, url: str, rows: int = 4, timeout: float = WAIT, poll: float = POLL) -> None:
    """Load the app and wait until the demo's comparison and candidate summary are drawn and settled."""
    driver.get(url)
    wait(driver, lambda d: len(comparison_rows(d)) >= rows and "uncentered R²" in text(d, "panel-candidate-summary"),
         timeout, poll)
    wait_idle(driver, timeout, poll)


def upload(driver: Any, path: str) -> None:
    """Hand a file to the data upload box, as choosing it in the file dialog would."""
    from selenium.webdriver.common.by import By

    driver.find_element(By.CSS_SELECTOR, "#data-upload input[type=file]").send_keys(path)


def scroll_to(driver: Any, element_id: str, block: str = "center", pause: float = 0.2) -> None:
    """Scroll an element into view and give the page ``pause`` seconds to settle there."""
    driver.execute_script(f"document.getElementById('{element_id}').scrollIntoView({{block: '{block}'}})")
    time.sleep(pause)


def shot(driver: Any, artifacts: str, name: str, element_id: str | None = None, *, block: str = "start",
         pause: float = 0.3) -> None:
    """Save ``<artifacts>/<name>.png``, first scrolling ``element_id`` (if given) into view."""
    if element_id:
        scroll_to(driver, element_id, block, pause)
    driver.save_screenshot(os.path.join(artifacts, f"{name}.png"))


def hold_k(driver: Any, timeout: float = WAIT, poll: float = POLL) -> None:
    """Choose "hold K at my estimate" (K is fitted by default) and wait until the fits hold it."""
    from selenium.webdriver.common.by import By

    radio = driver.find_element(By.CSS_SELECTOR, "#model-k-mode input[value='held']")
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'})", radio)
    time.sleep(0.2)
    radio.click()
    wait(driver, lambda d: "(held)" in "\n".join(comparison_rows(d)), timeout, poll)
    wait_idle(driver, timeout, poll)
