"""The dashboard in headless Chromium: the demo, uploads, forms, K, exclusions, errors, two sessions.

Every step saves a screenshot to tests/artifacts/. The data uploaded here are invented in the test.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pytest

from tests.app.browser.page import comparison_rows, hold_k, open_demo, scroll_to, shot, text, upload, wait, wait_idle

pytestmark = pytest.mark.browser


def _write_csv(path: str, header: str, t: np.ndarray, p: np.ndarray) -> str:
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(header + "\n")
        for a, b in zip(t, p, strict=True):
            fh.write(f"{a:g},{b:.4f}\n")
    return path


def _invented_stock(tmp_path: Any, name: str, k: float, r: float) -> str:
    """An invented index of a managed stock: Beverton–Holt-like rise with seeded noise."""
    rng = np.random.default_rng(7)
    p, out = 5.0, []
    for _ in range(30):
        out.append(p)
        p = p * (1 + r) / (1 + r * p / k)
    obs = np.array(out) * np.exp(rng.normal(0, 0.02, 30))
    return _write_csv(str(tmp_path / name), "Year,Stock index (t)", np.arange(1990, 2020), obs)


def test_demo_opens_with_every_panel(server_url: str, make_driver: Any, artifacts: str) -> None:
    for width, height in ((1280, 800), (1920, 1080)):
        driver = make_driver(width, height)
        open_demo(driver, server_url)
        page = driver.find_element("tag name", "body").text
        assert "algae_photobioreactor.csv" in page
        assert "validated methods" in page and "qualified professionals" in page
        assert "★ best AICc" in page
        for graph in ("panel-change", "panel-candidate", "panel-trajectory", "panel-residual-time",
                      "panel-residual-fitted", "panel-observed-predicted"):
            n = driver.execute_script(
                f"return document.querySelector('#{graph} .js-plotly-plot').data.length")
            assert n >= 2, graph
        assert not driver.find_elements("css selector", ".dash-debug-menu, .dash-fe-error__title")
        shot(driver, artifacts, f"01-demo-{width}x{height}")
    # keyboard: Tab reaches the K box, the row-exclusion box and the table's sort buttons
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.keys import Keys

    reached: set[str] = set()
    wanted = {"model-k-input", "exclusion-row", "sort-button"}
    for _ in range(250):
        ActionChains(driver).send_keys(Keys.TAB).perform()
        focused = driver.execute_script(
            "var e = document.activeElement; return e.id + ' ' + (e.className || '').toString();")
        reached |= {w for w in wanted if w in focused}
        if wanted <= reached:
            break
    assert wanted <= reached, reached


def test_upload_switch_forms_and_change_k(server_url: str, make_driver: Any, artifacts: str, tmp_path: Any) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    driver = make_driver(1280, 800)
    open_demo(driver, server_url)
    path = _invented_stock(tmp_path, "invented_stock_index.csv", k=120.0, r=0.6)
    upload(driver, path)
    wait(driver, lambda d: "invented_stock_index.csv" in text(d, "data-summary"))
    wait(driver, lambda d: "Stock index" in d.execute_script(
        "return document.querySelector('#panel-trajectory .js-plotly-plot').layout.yaxis.title.text"))
    wait_idle(driver)
    shot(driver, artifacts, "02-upload")

    # switch forms: add the theta-logistic, drop Ricker
    labels = {e.text.split("\n")[0]: e for e in driver.find_elements(By.CSS_SELECTOR, "#model-forms label")}
    labels["Theta-logistic"].click()
    labels["Ricker"].click()
    wait(driver, lambda d: any(r.startswith("theta-logistic") or "theta-logistic" in r for r in comparison_rows(d))
         and not any("ricker" in r for r in comparison_rows(d)))
    wait_idle(driver)
    shot(driver, artifacts, "03-forms")

    # hold K at the estimate (K is fitted by default), then change it by the number box: slope,
    # uncentered R² and the table must all change
    hold_k(driver)
    before_summary = text(driver, "panel-candidate-summary")
    before_table = comparison_rows(driver)
    box = driver.find_element(By.ID, "model-k-input")
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys("90", Keys.ENTER)
    wait(driver, lambda d: "K = 90" in text(d, "panel-candidate-summary"))
    wait(driver, lambda d: comparison_rows(d) != before_table)
    after_summary = text(driver, "panel-candidate-summary")
    assert after_summary != before_summary
    slope = lambda s: [line for line in s.splitlines() if "p·(1 − p/K)" in line]  # noqa: E731
    assert slope(after_summary) != slope(before_summary)
    assert "K = 90 (held)" in "\n".join(comparison_rows(driver))
    wait_idle(driver)
    shot(driver, artifacts, "04-k-by-input")

    # change K by dragging the handle at the right end of the dashed K line
    from selenium.webdriver.common.action_chains import ActionChains

    scroll_to(driver, "panel-trajectory")
    plot = driver.find_element(By.CSS_SELECTOR, "#panel-trajectory .js-plotly-plot")
    dx, dy = driver.execute_script(
        "var gd = arguments[0], r = gd.getBoundingClientRect();"
        "var h = gd.querySelectorAll('.shape-group[data-index=\"0\"] path');"
        "var b = h[h.length - 1].getBoundingClientRect();"
        "return [b.left + b.width / 2 - r.left - r.width / 2, b.top + b.height / 2 - r.top - r.height / 2];", plot)
    ActionChains(driver).move_to_element_with_offset(plot, int(dx), int(dy)).pause(0.3).click_and_hold() \
        .move_by_offset(0, 10).move_by_offset(0, 30).pause(0.2).release().perform()
    wait(driver, lambda d: d.find_element(By.ID, "model-k-input").get_attribute("value") not in ("90", ""))
    dragged = float(driver.find_element(By.ID, "model-k-input").get_attribute("value"))
    assert dragged < 90
    wait(driver, lambda d: f"K = {dragged:g}" in text(d, "panel-candidate-summary"))
    wait_idle(driver)
    shot(driver, artifacts, "05-k-by-drag")


def _observation_marker(driver: Any, graph: str, k: int) -> Any:
    """The k-th observation marker of a panel (the trace with meta 'points'), scrolled into view."""
    from selenium.webdriver.common.by import By

    scroll_to(driver, graph)
    trace = driver.execute_script(
        f"var gd = document.querySelector('#{graph} .js-plotly-plot');"
        "for (var i = 0; i < gd.data.length; i++) { if (gd.data[i].meta === 'points') return i; } return -1;")
    points = driver.find_elements(By.CSS_SELECTOR, f"#{graph} .scatterlayer .trace:nth-of-type({trace + 1}) path.point")
    return points[k]


def _click_observation(driver: Any, graph: str, k: int) -> None:
    """Click the k-th observation marker of a panel."""
    from selenium.webdriver.common.action_chains import ActionChains

    ActionChains(driver).move_to_element(_observation_marker(driver, graph, k)).pause(0.3).click().perform()


def test_hover_highlights_and_click_excludes(server_url: str, make_driver: Any, artifacts: str) -> None:
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.by import By

    driver = make_driver(1280, 800)
    open_demo(driver, server_url)
    before = comparison_rows(driver)
    # hover: the same observation is ringed in the other panels
    point = _observation_marker(driver, "panel-trajectory", 20)
    ActionChains(driver).move_to_element(point).pause(0.5).perform()
    ringed = "var gd = document.querySelector('#panel-change .js-plotly-plot');" \
             "var h = gd.data.filter(function (t) { return t.meta === 'highlight'; })[0]; return h.x.length;"
    wait(driver, lambda d: d.execute_script(ringed) == 1)
    shot(driver, artifacts, "06-hover")

    _click_observation(driver, "panel-trajectory", 20)
    wait(driver, lambda d: "excluded by the user" in text(d, "exclusion-list"))
    wait(driver, lambda d: comparison_rows(d) != before)
    assert "row 22" in text(driver, "exclusion-list")  # header is row 1, so point 20 is row 22
    rows_after = comparison_rows(driver)
    # an interior point ends two consecutive pairs: 39 pairs of the 40 observations become 37
    assert all("\t37\t" in r for r in rows_after), rows_after
    wait_idle(driver)
    shot(driver, artifacts, "07-excluded")

    driver.find_element(By.ID, "exclusion-undo").click()
    wait(driver, lambda d: "None: every point is used." in text(d, "exclusion-list"))
    wait(driver, lambda d: comparison_rows(d) == before)


def test_malformed_file_shows_message(server_url: str, make_driver: Any, artifacts: str, tmp_path: Any) -> None:
    driver = make_driver(1280, 800)
    open_demo(driver, server_url)
    bad = tmp_path / "broken_export.csv"
    bad.write_text("notes from the run\nthe sensor was off\nno numbers at all here\n", encoding="utf-8")
    upload(driver, str(bad))
    wait(driver, lambda d: "Not read." in text(d, "data-message"))
    message = text(driver, "data-message")
    assert "broken_export.csv" in message
    assert "still show algae_photobioreactor.csv" in message
    assert "Traceback" not in driver.find_element("tag name", "body").text
    assert len(comparison_rows(driver)) >= 4
    shot(driver, artifacts, "08-malformed")


def test_file_far_over_the_limit_is_refused_with_a_message(server_url: str, make_driver: Any, tmp_path: Any) -> None:
    """Over twice the limit the browser never sends the file; the page still says why nothing happened."""
    driver = make_driver(1280, 800)
    open_demo(driver, server_url)
    big = tmp_path / "whole_year_export.csv"
    with open(big, "wb") as handle:
        handle.truncate(21_000_000)  # over twice the default 10 MB limit (sparse: nothing is written)
    upload(driver, str(big))
    wait(driver, lambda d: "Not read." in text(d, "data-message"))
    message = text(driver, "data-message")
    assert "whole_year_export.csv" in message and "21,000,000 bytes" in message and "10,000,000" in message
    assert "still show algae_photobioreactor.csv" in message
    assert len(comparison_rows(driver)) >= 4


def test_two_sessions_do_not_share_data(server_url: str, make_driver: Any, artifacts: str, tmp_path: Any) -> None:
    first, second = make_driver(1280, 800), make_driver(1280, 800)
    open_demo(first, server_url)
    open_demo(second, server_url)
    a = _invented_stock(tmp_path, "site_north.csv", k=80.0, r=0.5)
    b = _invented_stock(tmp_path, "site_south.csv", k=300.0, r=0.9)
    upload(first, a)
    upload(second, b)
    wait(first, lambda d: "site_north.csv" in text(d, "data-summary"))
    wait(second, lambda d: "site_south.csv" in text(d, "data-summary"))
    wait_idle(first)
    wait_idle(second)
    first.refresh()  # a reload starts a fresh session: nothing of the other tab leaks in
    open_demo(first, server_url)
    assert "site_south.csv" not in first.find_element("tag name", "body").text
    assert "site_north.csv" not in second.find_element("tag name", "body").text
    assert "site_south.csv" in text(second, "data-summary")
    shot(second, artifacts, "09-second-session")
