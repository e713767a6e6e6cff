"""Panel 7 in headless Chromium on the invented demo data: a small bootstrap runs to the end with its
progress and intervals, a long one is cancelled midway, a forecast band appears on the trajectory.

Screenshots go to tests/artifacts/ at 1280×800 and 1920×1080.
"""

from __future__ import annotations

from collections.abc import Callable
from functools import partial
from typing import Any

import pytest

from tests.app.browser import page
from tests.app.browser.page import scroll_to, shot, text

pytestmark = pytest.mark.browser

wait = partial(page.wait, timeout=25, poll=0.05)


def _progress(driver: Any) -> tuple[int, int]:
    v = driver.execute_script("var e = document.getElementById('bootstrap-progress');"
                              "return [e.getAttribute('value'), e.getAttribute('max')];")
    return int(float(v[0] or 0)), int(float(v[1] or 1))


def _set(driver: Any, element_id: str, value: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    box = driver.find_element(By.ID, element_id)
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys(Keys.DELETE)
    box.send_keys(value)


def _click(driver: Any, element_id: str) -> None:
    driver.execute_script(f"document.getElementById('{element_id}').click()")


def _open(driver: Any, url: str) -> None:
    """Load the app and bring panel 7 into view (off screen it waits to be drawn)."""
    driver.get(url)
    wait(driver, lambda d: d.execute_script("return !!document.getElementById('slot-dynamics')"))
    scroll_to(driver, "slot-dynamics")
    wait(driver, lambda d: "implies" in text(d, "dynamics-sentences")
         and "stable" in text(d, "dynamics-equilibria"))


@pytest.mark.parametrize("size", [(1280, 800), (1920, 1080)])
def test_bootstrap_cancel_and_forecast(server_url: str, make_driver: Callable[..., Any], artifacts: str,
                                       size: tuple[int, int]) -> None:
    width, height = size
    driver = make_driver(width, height)
    _open(driver, server_url)
    assert "multiplier f'(p*)" in text(driver, "dynamics-equilibria")
    shot(driver, artifacts, f"dynamics_{width}_panel", "slot-dynamics", pause=0.4)

    # a long run, cancelled once it has started: the refits done so far stay and say so
    _set(driver, "bootstrap-resamples", "10000")
    _click(driver, "bootstrap-run")
    wait(driver, lambda d: 0 < _progress(d)[0] and "Running" in text(d, "bootstrap-status"))
    _click(driver, "bootstrap-cancel")
    wait(driver, lambda d: "Cancelled" in text(d, "bootstrap-status"))
    done, top = _progress(driver)
    assert 0 < done < 10000 and top == 10000
    assert "partial" in text(driver, "dynamics-intervals")
    shot(driver, artifacts, f"dynamics_{width}_cancelled", "bootstrap-run", pause=0.4)

    # a small run to the end: progress full, bootstrap intervals beside the t-based ones
    _set(driver, "bootstrap-resamples", "400")
    _set(driver, "bootstrap-seed", "7")
    _click(driver, "bootstrap-run")
    wait(driver, lambda d: "Done: 400 of 400" in text(d, "bootstrap-status"))
    assert _progress(driver) == (400, 400)
    table = text(driver, "dynamics-intervals")
    assert "t-based" in table and "bootstrap percentile" in table and "not run" not in table
    wait(driver, lambda d: "bootstrap [" in text(d, "comparison-table"))
    wait(driver, lambda d: "run the bootstrap" not in text(d, "dynamics-derived"))
    shot(driver, artifacts, f"dynamics_{width}_bootstrap", "bootstrap-run", pause=0.4)

    # a forecast: the band on the trajectory, its warnings and the caution beside it
    _set(driver, "forecast-amount", "12")
    _click(driver, "forecast-run")
    wait(driver, lambda d: "prediction band" in text(d, "forecast-notes"))
    notes = text(driver, "forecast-notes")
    assert "past the last observation" in notes and "bootstrap refits" in notes
    assert "validated methods" in text(driver, "slot-dynamics")
    names = driver.execute_script("return document.getElementById('panel-trajectory')"
                                  ".querySelector('.js-plotly-plot').data.map(t => t.name);")
    assert any(n and n.startswith("forecast:") for n in names)
    shot(driver, artifacts, f"dynamics_{width}_forecast", "forecast-run", pause=0.4)
    shot(driver, artifacts, f"dynamics_{width}_trajectory_band", "panel-trajectory", pause=0.4)


def test_panel_seven_is_drawn_when_it_comes_into_view(server_url: str, make_driver: Callable[..., Any]) -> None:
    """Off screen, panel 7 waits; brought into view it describes the fits of the K now committed."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    driver = make_driver(1280, 800)
    _open(driver, server_url)
    driver.execute_script("window.scrollTo(0, 0)")  # the top of the page: panel 7 is far below
    page.hold_k(driver)
    described = text(driver, "dynamics-equilibria")
    box = driver.find_element(By.ID, "model-k-input")
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("3.5", Keys.ENTER)
    wait(driver, lambda d: "K = 3.5" in "\n".join(page.comparison_rows(d)))
    page.wait_idle(driver)
    assert text(driver, "dynamics-equilibria") == described  # not redrawn off screen
    scroll_to(driver, "slot-dynamics")
    wait(driver, lambda d: "3.5" in text(d, "dynamics-equilibria") and text(d, "dynamics-equilibria") != described)


def test_a_reopened_record_sets_panel_seven_and_draws_its_forecast(server_url: str, make_driver: Callable[..., Any],
                                                                   artifacts: str) -> None:
    """The kept command-line record (the invented island census, a bootstrap of 20, a forecast of 3 steps, a level of
    300): reopened, panel 7's fields hold its settings and its forecast is drawn with the fits."""
    import os

    from selenium.webdriver.common.by import By

    record = os.path.join(os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))),
                          "fixtures", "fit-record-v1.json")
    driver = make_driver(1280, 800)
    _open(driver, server_url)
    driver.find_element(By.CSS_SELECTOR, "#export-record-upload input[type=file]").send_keys(record)
    wait(driver, lambda d: "Reopened fit-record-v1.json" in text(d, "export-record-message"))
    assert "press Run bootstrap" in text(driver, "export-record-message")
    wait(driver, lambda d: "3 points to t = 2026" in text(d, "forecast-notes"))
    values = driver.execute_script("return ['bootstrap-resamples', 'bootstrap-seed', 'forecast-amount', "
                                   "'dynamics-level'].map(i => document.getElementById(i).value)")
    assert values == ["20", "20240601", "3", "300"]
    names = driver.execute_script("return document.getElementById('panel-trajectory')"
                                  ".querySelector('.js-plotly-plot').data.map(t => t.name);")
    assert any(n and n.startswith("forecast:") for n in names)
    shot(driver, artifacts, "dynamics_reopened_record", "slot-dynamics", pause=0.4)
