"""Every exported PNG drawn by the browser's plotly.js at its size: no two texts overlap, none is cut.

The figures are the export's own jobs for six forms fitted by both methods with log error, the log
state scale and the iterated paths chosen (the most crowded case): titles, keys, axis titles, tick
labels, annotations and table cells are SVG text, so their boxes can be compared directly. Every
table row of the summary sheet must be drawn on one of its pages. The data are the invented demo file.
"""

from __future__ import annotations

from collections import Counter
from typing import Any

import pytest

from growthcore.app.callbacks import export as ex
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.settings import build_settings
from growthcore.app.server import DEMO_FILE, read_source
from growthcore.report.panels import comparison_columns, key_constant_columns
from tests.app.browser.page import wait

pytestmark = pytest.mark.browser

SIX_FORMS = ["geometric", "logistic", "beverton-holt", "ricker", "gompertz", "logistic-curve"]

#: Draws one figure at its size, then returns its texts' boxes and the figure's box.
DRAW_JS = """
var fig = arguments[0], w = arguments[1], h = arguments[2], done = arguments[arguments.length - 1];
var div = document.createElement('div');
div.style.cssText = 'position:absolute;left:0;top:0;z-index:9999;background:#fff;width:' + w + 'px;height:' + h + 'px';
document.body.appendChild(div);
var layout = Object.assign({}, fig.layout, {width: w, height: h});
Plotly.newPlot(div, fig.data, layout, {staticPlot: true}).then(function () {
  var box = div.getBoundingClientRect();
  var texts = [];
  div.querySelectorAll('svg text').forEach(function (t) {
    var s = t.textContent.trim();
    if (!s) { return; }
    var r = t.getBoundingClientRect();
    if (r.width === 0 || r.height === 0) { return; }
    texts.push({text: s, l: r.left - box.left, r: r.right - box.left, t: r.top - box.top, b: r.bottom - box.top,
                cell: !!t.closest('.table')});
  });
  Plotly.purge(div); div.remove();
  done({w: box.width, h: box.height, texts: texts});
});
"""


def _jobs(size: str) -> list[dict[str, Any]]:
    data = import_source(read_source(DEMO_FILE))
    settings = build_settings(SIX_FORMS, [], "p*(1 - p/K)", "both", "log", "held")[0]
    k = update_capacity(None, None, None, None, data, settings, None, None)[0]
    exclusions = {"key": data["key"], "excluded": {}, "history": []}
    out = ex.on_export(1, data, exclusions, settings, k, settings["models"], ["images"], size, None, None,
                       "log", "first", "state")
    jobs = out[3]["images"]
    assert f"{len(jobs)} PNG images ({size}) follow" in str(out[4])
    return jobs


def _overlaps(texts: list[dict[str, Any]], slack: float = 1.5) -> list[tuple[str, str]]:
    """Pairs of texts whose boxes, each shrunk by ``slack`` px (glyph boxes include line spacing), meet."""
    out = []
    for i, a in enumerate(texts):
        for b in texts[i + 1:]:
            w = min(a["r"], b["r"]) - max(a["l"], b["l"]) - 2 * slack
            h = min(a["b"], b["b"]) - max(a["t"], b["t"]) - 2 * slack
            if w > 0 and h > 0:
                out.append((a["text"][:40], b["text"][:40]))
    return out


@pytest.mark.parametrize("size", ["screen", "print"])
def test_exported_pngs_have_no_overlapping_or_cut_text(server_url: str, make_driver: Any, size: str) -> None:
    driver = make_driver(1400, 1000)
    driver.get(server_url)
    wait(driver, lambda d: d.execute_script("return !!window.Plotly"))
    driver.set_script_timeout(60)
    jobs = _jobs(size)
    drawn_cells: list[str] = []
    for job in jobs:
        got = driver.execute_async_script(DRAW_JS, job["figure"], job["width"], job["height"])
        name = job["filename"].rsplit("-more-", 1)[-1]
        assert _overlaps(got["texts"]) == [], name
        cut = [t["text"][:40] for t in got["texts"]
               if t["l"] < -1 or t["t"] < -1 or t["r"] > got["w"] + 1 or t["b"] > got["h"] + 1]
        assert cut == [], name
        if "summary-sheet" in name:
            drawn_cells += [t["text"] for t in got["texts"] if t["cell"]]
    # every row of both sheet tables is drawn on some page (a row's first cell is its form's label)
    record = ex.session_record(*_session_stores(), forms=None)

    def plain(label: str) -> str:
        # a wrapped cell's lines come back joined without their space: compare without spaces
        return "".join(label.replace(" ★", "").replace(" – failed", "").split())

    wanted = Counter(plain(x) for x in comparison_columns(record)[1][0] + key_constant_columns(record)[1][0])
    drawn = Counter(plain(c) for c in drawn_cells if plain(c) in wanted)
    assert len(wanted) >= 11 and drawn == wanted


def _session_stores() -> tuple[Any, ...]:
    data = import_source(read_source(DEMO_FILE))
    settings = build_settings(SIX_FORMS, [], "p*(1 - p/K)", "both", "log", "held")[0]
    k = update_capacity(None, None, None, None, data, settings, None, None)[0]
    return data, {"key": data["key"], "excluded": {}, "history": []}, settings, k
