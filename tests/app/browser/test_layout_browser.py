"""The screen at three sizes with six forms chosen: plots keep their room and no text is cut.

At 1280 × 800, 1600 × 1200 and 1920 × 1080 (common laptop, desktop and full-HD screens) each plot
area must keep at least 60% of its graph's box (area of the plotting rectangle over the area of the
figure; the key of the forms sits outside the plots), no text may overflow its box (HTML elements
and the plots' SVG text alike), and the comparison table must show its status column without
sideways scrolling. Screenshots go to tests/artifacts/. The data are the invented demo file.
"""

from __future__ import annotations

from typing import Any

import pytest

from tests.app.browser.page import comparison_rows, open_demo, shot, text, wait, wait_idle

pytestmark = pytest.mark.browser

SIX_FORMS = ("geometric", "logistic", "beverton-holt", "ricker", "gompertz", "logistic-curve")
SIZES = ((1280, 800), (1600, 1200), (1920, 1080))
GRAPHS = ("panel-change", "panel-candidate", "panel-trajectory", "panel-residual-time", "panel-residual-fitted",
          "panel-observed-predicted")
MIN_PLOT_SHARE = 0.60

#: Area of each graph's plotting rectangles (one per subplot) over the area of the figure.
PLOT_SHARE_JS = """
var out = {};
arguments[0].forEach(function (id) {
  var gd = document.querySelector('#' + id + ' .js-plotly-plot');
  var box = gd.getBoundingClientRect(), area = 0;
  gd.querySelectorAll('.draglayer .nsewdrag').forEach(function (r) {
    var b = r.getBoundingClientRect(); area += b.width * b.height;
  });
  out[id] = area / (box.width * box.height);
});
return out;
"""

#: Text that does not fit: HTML elements whose content is wider than their box (or leaves its panel),
#: SVG text of a plot that leaves the figure. Each entry says where and what.
OVERFLOW_JS = """
var bad = [];
function visible(e) { var r = e.getBoundingClientRect(); return r.width > 0 && r.height > 0; }
document.querySelectorAll('.view-bar, .panels > .panel, .panel-table').forEach(function (panel) {
  var pb = panel.getBoundingClientRect();
  panel.querySelectorAll('*').forEach(function (e) {
    if (!visible(e) || e.closest('svg') || e.closest('.js-plotly-plot')) { return; }
    var style = getComputedStyle(e);
    if (e.scrollWidth > e.clientWidth + 1 && e.clientWidth > 0 && style.overflowX !== 'visible') {
      bad.push('clipped: ' + (e.id || e.className || e.tagName) + ' ' + e.scrollWidth + ' > ' + e.clientWidth);
    }
    var own = Array.prototype.some.call(e.childNodes, function (n) {
      return n.nodeType === 3 && n.textContent.trim();
    });
    if (own) {
      var r = e.getBoundingClientRect();
      if (r.left < pb.left - 1 || r.right > pb.right + 1) {
        bad.push('leaves its panel: ' + e.textContent.trim().slice(0, 60));
      }
    }
  });
});
arguments[0].forEach(function (id) {
  var gd = document.querySelector('#' + id + ' .js-plotly-plot');
  var gb = gd.getBoundingClientRect();
  gd.querySelectorAll('svg text').forEach(function (t) {
    if (!t.textContent.trim() || !visible(t)) { return; }
    var r = t.getBoundingClientRect();
    if (r.left < gb.left - 1 || r.right > gb.right + 1 || r.top < gb.top - 1 || r.bottom > gb.bottom + 1) {
      bad.push(id + ' text outside the figure: ' + t.textContent.trim().slice(0, 60));
    }
  });
});
return bad;
"""


def _choose(driver: Any, forms: tuple[str, ...], method: str | None = None) -> None:
    driver.execute_script(
        "var want = arguments[0];"
        "document.querySelectorAll('#model-forms input[type=checkbox]').forEach(function (b) {"
        "  if ((want.indexOf(b.value) >= 0) !== b.checked) { b.click(); } });", list(forms))
    if method:
        driver.execute_script(f"document.querySelector('#model-method input[value={method}]').click()")


def _table_fits(driver: Any) -> tuple[int, int, float, float]:
    return driver.execute_script(
        "var b = document.getElementById('comparison-table'), th = b.querySelectorAll('thead th');"
        "var last = th[th.length - 1].getBoundingClientRect(), box = b.getBoundingClientRect();"
        "return [b.scrollWidth, b.clientWidth, last.right, box.right];")


@pytest.mark.parametrize("width,height", SIZES, ids=[f"{w}x{h}" for w, h in SIZES])
def test_six_forms_fit_the_screen(server_url: str, make_driver: Any, artifacts: str, width: int, height: int) -> None:
    driver = make_driver(width, height)
    open_demo(driver, server_url)
    _choose(driver, SIX_FORMS)
    wait(driver, lambda d: len(comparison_rows(d)) == len(SIX_FORMS))
    wait_idle(driver)
    # the key lists every chosen form once, outside the plots
    key = text(driver, "panel-form-key")
    assert all(f"{m} (increments)" in key for m in SIX_FORMS), key
    shares = driver.execute_script(PLOT_SHARE_JS, list(GRAPHS))
    print(f"{width}x{height} plot share:", {k: round(v, 3) for k, v in shares.items()})
    small = {g: round(s, 3) for g, s in shares.items() if s < MIN_PLOT_SHARE}
    assert not small, f"plot areas under {MIN_PLOT_SHARE:.0%} of their panel: {small}"
    overflow = driver.execute_script(OVERFLOW_JS, list(GRAPHS))
    assert overflow == [], "\n".join(overflow)
    scroll, client, status_right, box_right = _table_fits(driver)
    assert scroll <= client + 1 and status_right <= box_right + 1, "the status column needs sideways scrolling"
    shot(driver, artifacts, f"30-six-forms-{width}x{height}")
    shot(driver, artifacts, f"31-six-forms-lower-{width}x{height}", "panel-residual-time", block="center")
    shot(driver, artifacts, f"32-six-forms-table-{width}x{height}", "comparison-table")


def test_only_curves_blank_panel_says_what_to_do_in_full(server_url: str, make_driver: Any, artifacts: str) -> None:
    driver = make_driver(1280, 800)
    open_demo(driver, server_url)
    _choose(driver, ("logistic-curve", "gompertz-curve"), "trajectory")
    wait(driver, lambda d: len(comparison_rows(d)) == 2)
    wait_idle(driver)
    message = driver.execute_script(
        "var gd = document.querySelector('#panel-candidate .js-plotly-plot');"
        "return Array.from(gd.querySelectorAll('.annotation-text tspan.line')).map(t => t.textContent).join(' ');")
    assert "closed-form curves" in message and "choose a difference form" in message
    assert message.rstrip().endswith("custom rate terms."), message
    assert driver.execute_script(OVERFLOW_JS, ["panel-candidate"]) == []
    shot(driver, artifacts, "33-only-curves", "panel-candidate", block="center")


def test_mixed_error_scales_get_an_axis_each(server_url: str, make_driver: Any, artifacts: str) -> None:
    """Both methods with log error: increments residuals are p − p̂, trajectory ones ln p − ln p̂."""
    driver = make_driver(1600, 1200)
    open_demo(driver, server_url)
    _choose(driver, ("logistic", "gompertz"), "both")
    wait(driver, lambda d: len(comparison_rows(d)) == 4)
    wait_idle(driver)
    driver.find_element("css selector", "#model-error input[value=log]").click()
    wait(driver, lambda d: "log error" in "\n".join(comparison_rows(d)))
    wait_idle(driver)
    titles = driver.execute_script(
        "var gd = document.querySelector('#panel-residual-time .js-plotly-plot');"
        "return Array.from(gd.querySelectorAll('.ytitle, .y2title')).map(t => t.textContent);")
    assert sorted(titles) == ["ln p − ln p̂", "p − p̂ [g/L]"], titles
    assert driver.execute_script(OVERFLOW_JS, ["panel-residual-time", "panel-residual-fitted"]) == []
    shot(driver, artifacts, "34-mixed-error-scales", "panel-residual-time", block="center")


def test_a_point_on_the_k_line_takes_the_click(server_url: str, make_driver: Any, artifacts: str) -> None:
    """K set exactly to an observation's value: clicking that point excludes it (the line takes no
    clicks; only the handle in the margin moves K), on the linear and on the log scale."""
    from selenium.webdriver.common.actions.action_builder import ActionBuilder
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    driver = make_driver(1600, 1200)
    open_demo(driver, server_url)
    for k, scale in enumerate(("linear", "log")):
        driver.find_element(By.CSS_SELECTOR, f"#panel-state-scale input[value={scale}]").click()
        index = 30 + k
        t, p = driver.execute_script(
            "var gd = document.querySelector('#panel-trajectory .js-plotly-plot');"
            "var o = gd.data.find(x => x.name === 'observed'); return [o.x[arguments[0]], o.y[arguments[0]]];", index)
        box = driver.find_element(By.ID, "model-k-input")
        driver.execute_script("arguments[0].scrollIntoView({block: 'center'})", box)
        box.send_keys(Keys.CONTROL, "a")
        box.send_keys(str(p), Keys.ENTER)
        wait(driver, lambda d, p=p, axis_type="log" if scale == "log" else "linear": d.execute_script(
            "var gd = document.querySelector('#panel-trajectory .js-plotly-plot');"
            "var line = gd.data.find(x => x.meta === 'capacity');"
            "return line && line.y[0] === arguments[0] && gd._fullLayout.yaxis.type === arguments[1];", p,
            axis_type))
        wait_idle(driver)
        driver.execute_script("window.scrollTo(0, 0)")
        x, y = driver.execute_script(
            "var gd = document.querySelector('#panel-trajectory .js-plotly-plot'), L = gd._fullLayout;"
            "var r = gd.getBoundingClientRect();"
            "return [r.left + L.xaxis._offset + L.xaxis.l2p(arguments[0]),"
            "        r.top + L.yaxis._offset + L.yaxis.l2p(L.yaxis.d2l(arguments[1]))];", t, p)
        action = ActionBuilder(driver)
        action.pointer_action.move_to_location(int(x), int(y))
        action.pointer_action.pause(0.4)
        action.pointer_action.click()
        action.perform()
        row = index + 2  # the header is row 1
        wait(driver, lambda d, row=row: f"row {row}:" in text(d, "exclusion-list"))
        wait_idle(driver)
    shot(driver, artifacts, "35-click-on-k-line", "panel-trajectory", block="center")
