"""Many series in headless Chromium: upload a plate, fit every well in chunks, the overview grid and
the plate map, a click that opens a well in the panels, and stopping a run.

The plates uploaded here are invented in the test (logistic rises with seeded noise, one flat well).
Screenshots go to tests/artifacts/.
"""

from __future__ import annotations

import os
import time
from functools import partial
from typing import Any

import numpy as np
import pytest

from tests.app.browser import page
from tests.app.browser.page import shot, text, upload

pytestmark = pytest.mark.browser

wait = partial(page.wait, timeout=30, poll=0.05)
wait_idle = partial(page.wait_idle, timeout=30, poll=0.05)
scroll_to = partial(page.scroll_to, block="start", pause=0.3)


def invented_plate(path: str, rows: int = 8, cols: int = 12, n: int = 97, flat: tuple[str, ...] = ("C5",)) -> str:
    """An invented plate run: logistic rises above a background; capacity grows along each row; blank wells."""
    rng = np.random.default_rng(11)
    t = np.arange(n) * 0.25
    wells = [f"{chr(65 + r)}{c + 1}" for r in range(rows) for c in range(cols)]
    columns = []
    for i, well in enumerate(wells):
        k = 0.6 + 0.6 * (i % cols) / max(1, cols - 1)
        r = 0.5 + 0.5 * (i // cols) / max(1, rows - 1)
        p = 0.08 + k / (1 + (k / 0.02 - 1) * np.exp(-r * t)) + rng.normal(0, 0.004, n)
        if well in flat:  # a blank well, read as zero after background subtraction: nothing to fit
            p = np.zeros(n)
        columns.append(p)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("Time (h)," + ",".join(wells) + "\n")
        for j in range(n):
            fh.write(f"{t[j]:g}," + ",".join(f"{c[j]:.4f}" for c in columns) + "\n")
    return path


def _open_file(driver: Any, url: str, path: str) -> None:
    driver.get(url)
    wait(driver, lambda d: "algae_photobioreactor.csv" in text(d, "data-summary"))
    wait_idle(driver)
    upload(driver, path)
    name = os.path.basename(path)
    wait(driver, lambda d: name in text(d, "data-summary"))
    wait(driver, lambda d: d.execute_script(
        "var s = document.getElementById('series-overview'); return s && !s.hidden;"))
    wait_idle(driver)


def _set_forms(driver: Any, wanted: set[str]) -> None:
    from selenium.webdriver.common.by import By

    for label in driver.find_elements(By.CSS_SELECTOR, "#model-forms label"):
        box = label.find_element(By.TAG_NAME, "input")
        title = label.text.split("\n")[0]
        if box.is_selected() != (title in wanted):
            label.click()
    wait_idle(driver)


def _grid_panels(driver: Any) -> int:
    return driver.execute_script(
        "var gd = document.querySelector('#batch-grid .js-plotly-plot');"
        "return gd && gd.layout && gd.layout.meta ? gd.layout.meta.panels.length : 0;")


def _run_to_end(driver: Any, total: int) -> list[str]:
    """Click 'Fit every series' and return the distinct status lines seen until the run ends."""
    from selenium.webdriver.common.by import By

    driver.find_element(By.ID, "batch-run").click()
    seen: list[str] = []

    def done(d: Any) -> bool:
        line = text(d, "batch-status")
        if line and (not seen or seen[-1] != line):
            seen.append(line)
        return line.startswith(f"All {total} series fitted")

    wait(driver, done, timeout=60, poll=0.03)
    wait_idle(driver)
    return seen


def _click_at(driver: Any, x: float, y: float) -> None:
    """Move the pointer to (x, y) of the viewport, rest there (plotly picks the point on hover), click."""
    from selenium.webdriver.common.action_chains import ActionChains
    from selenium.webdriver.common.actions.action_builder import ActionBuilder

    actions = ActionBuilder(driver)
    actions.pointer_action.move_to_location(int(x), int(y))
    actions.perform()
    ActionChains(driver).pause(0.4).click().perform()


def _click_plate_well(driver: Any, row: int, col: int) -> None:
    from selenium.webdriver.common.by import By

    plot = driver.find_element(By.CSS_SELECTOR, "#batch-plate .js-plotly-plot")
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'})", plot)
    x, y = driver.execute_script(
        "var gd = arguments[0], L = gd._fullLayout, r = gd.getBoundingClientRect();"
        "return [r.left + L.xaxis._offset + L.xaxis.l2p(arguments[2]),"
        "        r.top + L.yaxis._offset + L.yaxis.l2p(arguments[1])];",
        plot, row, col + 1)
    _click_at(driver, x, y)


def _click_grid_point(driver: Any, series: str) -> None:
    """Click a middle observation of one series' panel in the overview grid."""
    from selenium.webdriver.common.by import By

    plot = driver.find_element(By.CSS_SELECTOR, "#batch-grid .js-plotly-plot")
    script = ("var gd = arguments[0], L = gd._fullLayout, r = gd.getBoundingClientRect();"
              "var tr = gd.data.find(t => t.meta === 'points'), mine = [];"
              "tr.customdata.forEach((c, i) => { if (c[0] === arguments[1]) mine.push(i); });"
              "var k = mine[Math.floor(mine.length * 0.15)];"
              "return [r.left + L.xaxis._offset + L.xaxis.l2p(tr.x[k]),"
              "        r.top + L.yaxis._offset + L.yaxis.l2p(tr.y[k])];")
    _, y = driver.execute_script(script, plot, series)
    driver.execute_script("window.scrollBy(0, arguments[0] - window.innerHeight / 2)", y)
    time.sleep(0.3)
    x, y = driver.execute_script(script, plot, series)
    _click_at(driver, x, y)


def _trajectory_name(driver: Any) -> str:
    return driver.execute_script(
        "var gd = document.querySelector('#panel-trajectory .js-plotly-plot');"
        "return gd && gd.layout && gd.layout.title ? (gd.layout.title.text || '') : '';")


def _viewport(driver: Any, width: int, height: int) -> None:
    driver.set_window_size(width, height)
    driver.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                           {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False})
    time.sleep(0.8)   # plotly redraws the responsive figures for the new width
    wait_idle(driver)


def test_plate_overview_map_click_stop_and_groups(server_url: str, make_driver: Any, artifacts: str,
                                                  tmp_path: Any) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    plate = invented_plate(str(tmp_path / "invented_plate_96.csv"))
    driver = make_driver(1280, 800)
    _open_file(driver, server_url, plate)
    assert "“A1”" in text(driver, "data-summary")
    _set_forms(driver, {"Discrete logistic", "Discrete Gompertz"})
    # before any fit: the grid shows the data of all 96 wells
    wait(driver, lambda d: _grid_panels(d) == 96)
    assert "not fitted yet" in text(driver, "batch-grid")

    seen = _run_to_end(driver, 96)
    partial = [s for s in seen if s.startswith("Fitting") and " 0 of 96" not in s and "96 of 96" not in s]
    assert partial, f"no progress line between start and end: {seen}"
    assert "2 form(s)" in text(driver, "batch-status")
    # the blank well cannot be fitted by either form: its panel and its cell are marked, with the reason
    grid_text = text(driver, "batch-grid")
    assert "C5 · fit failed" in grid_text, grid_text[:400]
    assert "same scales in every panel" in grid_text
    failed = text(driver, "batch-failed")
    assert "1 fit(s) of logistic (increments) failed" in failed and "C5" in failed
    n_lines = driver.execute_script(
        "return document.querySelector('#batch-grid .js-plotly-plot').layout.meta.panels.filter(p => p.fitted).length;")
    assert n_lines == 95
    heat = driver.execute_script(
        "var gd = document.querySelector('#batch-plate .js-plotly-plot');"
        "var h = gd.data[0]; return [h.type, h.z.length, h.z[0].length, gd.data.some(t => t.meta === 'failed')];")
    assert heat == ["heatmap", 8, 12, True]
    assert driver.find_element(By.ID, "batch-plate-quantity").text.strip().startswith("constant K")
    for width, height in ((1280, 800), (1920, 1080)):
        _viewport(driver, width, height)
        scroll_to(driver, "series-overview")
        shot(driver, artifacts, f"series-01-grid-{width}x{height}")
        scroll_to(driver, "batch-plate-box")
        shot(driver, artifacts, f"series-02-plate-{width}x{height}")
    _viewport(driver, 1280, 800)

    # a click on well D7 of the plate map opens it in the panels, which scroll into view
    _click_plate_well(driver, 3, 6)
    wait(driver, lambda d: "“D7”" in text(d, "data-summary"))
    wait(driver, lambda d: "D7: 43 of 96 in the file" in text(d, "series-position"))
    wait_idle(driver)
    wait(driver, lambda d: "D7" in text(d, "panel-trajectory"))
    top = driver.execute_script("return document.getElementById('main').getBoundingClientRect().top")
    assert abs(top) < 40, top
    shot(driver, artifacts, "series-03-opened-D7")

    # a click on the panel of B3 in the grid does the same, and the grid frames B3
    _click_grid_point(driver, "B3")
    wait(driver, lambda d: "“B3”" in text(d, "data-summary"))
    wait_idle(driver)
    frame = driver.execute_script(
        "var gd = document.querySelector('#batch-grid .js-plotly-plot'); var s = gd.layout.shapes[0];"
        "var b = gd.layout.meta.panels.find(p => p.series === 'B3').box; return [s.visible, s.x0 < b[0], s.x1 > b[1]];")
    assert frame == [True, True, True]
    # next steps through the file order: B3 -> B4
    driver.find_element(By.ID, "series-next").click()
    wait(driver, lambda d: "“B4”" in text(d, "data-summary"))
    wait_idle(driver)

    # a 384-well plate: pages of 96; a run stopped part way keeps what it fitted
    big = invented_plate(str(tmp_path / "invented_plate_384.csv"), rows=16, cols=24, n=40)
    upload(driver, big)
    wait(driver, lambda d: "invented_plate_384.csv" in text(d, "data-summary"))
    wait(driver, lambda d: "series 1–96 of 384" in text(d, "batch-grid"))
    wait_idle(driver)
    assert _grid_panels(driver) == 96
    driver.find_element(By.ID, "batch-run").click()
    wait(driver, lambda d: text(d, "batch-status").startswith("Fitting") and " 0 of 384" not in text(d, "batch-status"))
    driver.find_element(By.ID, "batch-stop").click()
    wait(driver, lambda d: text(d, "batch-status").startswith("Stopped by you"))
    time.sleep(1.0)   # no further chunk may arrive
    wait_idle(driver)
    line = text(driver, "batch-status")
    assert line.startswith("Stopped by you"), line
    done = int(line.split("after ")[1].split(" of")[0])
    assert 0 < done < 384
    # the grid shows what the stopped run fitted, even when its last redraw was held back
    shown = f"logistic (increments): series 1–96 of 384 · {384 - done} not fitted"
    wait(driver, lambda d: shown in text(d, "batch-grid"))
    heat = driver.execute_script("var h = document.querySelector('#batch-plate .js-plotly-plot').data[0];"
                                 "return [h.z.length, h.z[0].length, h.text[15][23]];")
    assert heat == [16, 24, "not fitted yet"]
    scroll_to(driver, "series-overview")
    shot(driver, artifacts, "series-04-stopped-384")

    # group wells by plate row with a pattern; show row C only and step into it
    driver.find_element(By.CSS_SELECTOR, "#slot-series details summary").click()
    driver.find_element(By.CSS_SELECTOR, "#series-group-mode input[value=pattern]").click()
    driver.find_element(By.ID, "series-group-text").send_keys(r"^([A-P])\d+$", Keys.ENTER)
    wait(driver, lambda d: "16 group(s) of 384 series" in text(d, "series-group-message"))
    driver.find_element(By.CSS_SELECTOR, "#series-group-filter").click()
    option = [o for o in driver.find_elements(By.CSS_SELECTOR, "[role=option]") if o.text.startswith("C (24)")]
    option[0].click()
    wait(driver, lambda d: _grid_panels(d) == 24)
    driver.find_element(By.ID, "series-next").click()
    wait(driver, lambda d: "“C1”" in text(d, "data-summary"))
    wait(driver, lambda d: "C1: 1 of 24 in group C" in text(d, "series-position"))
    wait_idle(driver)
    scroll_to(driver, "series-overview")
    shot(driver, artifacts, "series-05-group-C")


def test_group_means_f_test_and_table_download(server_url: str, make_driver: Any, artifacts: str,
                                               tmp_path: Any) -> None:
    """Invented tanks in two feeds: group means after the run, the F test on r, and the table as CSV."""
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    rng = np.random.default_rng(4)
    days = np.arange(25)
    lines = ["Day,Tank,Feed,Count"]
    for tank, feed, r in (("F1", "fed", 0.9), ("F2", "fed", 0.85), ("F3", "fed", 0.95),
                          ("L1", "lean", 0.5), ("L2", "lean", 0.55), ("L3", "lean", 0.45)):
        counts = 200 / (1 + 49 * np.exp(-r * days)) * np.exp(rng.normal(0, 0.02, days.size))
        lines += [f"{d},{tank},{feed},{c:.3f}" for d, c in zip(days, counts, strict=True)]
    path = tmp_path / "invented_tanks_by_feed.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    downloads = tmp_path / "downloads"
    downloads.mkdir()
    driver = make_driver(1280, 900)
    driver.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads)})
    _open_file(driver, server_url, str(path))
    _set_forms(driver, {"Discrete logistic"})
    driver.find_element(By.CSS_SELECTOR, "#slot-series details summary").click()
    driver.find_element(By.CSS_SELECTOR, "#series-group-mode input[value=column]").click()
    driver.find_element(By.ID, "series-group-text").send_keys("Feed", Keys.ENTER)
    wait(driver, lambda d: "2 group(s) of 6 series" in text(d, "series-group-message"))
    _run_to_end(driver, 6)
    wait(driver, lambda d: "Group means of logistic" in text(d, "batch-group-summary"))
    summary = text(driver, "batch-group-summary")
    assert "fed" in summary and "lean" in summary and "95% interval of the mean" in summary
    driver.find_element(By.ID, "batch-ftest-run").click()
    wait(driver, lambda d: "F(" in text(d, "batch-ftest-result"), timeout=60)
    result = text(driver, "batch-ftest-result")
    assert "the groups differ at the 5% level" in result and "fed: r =" in result
    scroll_to(driver, "batch-tables")
    shot(driver, artifacts, "series-06-groups-ftest")
    driver.find_element(By.ID, "batch-table-button").click()
    wait(driver, lambda d: [f for f in os.listdir(downloads) if f.endswith(".csv")])
    (name,) = [f for f in os.listdir(downloads) if f.endswith(".csv")]
    assert name == "invented_tanks_by_feed-every-series.csv"
    table = (downloads / name).read_text(encoding="utf-8").splitlines()
    assert table[0].startswith("series,group,form,status,message") and len(table) == 7
