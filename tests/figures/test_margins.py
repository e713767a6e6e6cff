"""The left margin worked out before plotly.js draws (growthcore/figures/margins.py).

The tick rule is plotly.js's own for a linear axis (axes.js: the axis cut in clamp(px / 40, 4, 9) + 1
pieces, the step rounded up to 2, 5 or 10 times a power of ten), read in the plotly.js that plotly 7
installs; the pixel widths were measured in Chromium. That the browser then keeps the margin is checked
on real panels by tests/app/browser/test_margins_browser.py.
"""

from __future__ import annotations

import pytest

from growthcore.figures.common import base_layout
from growthcore.figures.margins import PANEL_PLOT_PX, left_margin, tick_labels, tick_step, with_left_margin


@pytest.mark.parametrize(("span", "px", "step"), [
    (3.5, 246.0, 0.5),    # 3.5 / 7.15 = 0.49 -> 0.5
    (3.6, 246.0, 1.0),    # 0.503 -> 1
    (0.7, 246.0, 0.1),    # 0.098 -> 0.1 (a power of ten itself rounds up to the next of 2, 5, 10 only above it)
    (250.0, 246.0, 50.0),
    (3.5, 100.0, 1.0),    # a short axis: 4 + 1 pieces
    (3.5, 600.0, 0.5),    # a tall one: 9 + 1 pieces
])
def test_tick_step_follows_the_plotly_rule(span: float, px: float, step: float) -> None:
    assert tick_step(span, px) == pytest.approx(step)


def test_tick_labels_are_written_as_plotly_writes_them() -> None:
    assert tick_labels(-0.3, 0.33, PANEL_PLOT_PX) == ["−0.3", "−0.2", "−0.1", "0", "0.1", "0.2", "0.3"]
    assert tick_labels(-0.2, 3.2, PANEL_PLOT_PX) == ["0", "0.5", "1", "1.5", "2", "2.5", "3"]
    assert tick_labels(-0.2, 3.4, PANEL_PLOT_PX) == ["0", "1", "2", "3"]  # a span of 3.6: steps of 1
    assert tick_labels(0.0, 2500.0, PANEL_PLOT_PX) == ["0", "500", "1000", "1500", "2000", "2500"]
    # a power of ten (plotly.js: an end of the range past 10^±3): left to automargin
    assert tick_labels(0.0, 25_000.0, PANEL_PLOT_PX) is None
    assert tick_labels(0.0001, 0.0009, PANEL_PLOT_PX) is None
    assert tick_labels(1.0, 1.0, PANEL_PLOT_PX) is None


def _figure(ys: list[float], *, size: float = 6, log: bool = False) -> dict:
    layout = base_layout("x", "y")
    if log:
        layout["yaxis"]["type"] = "log"
    return {"data": [{"type": "scatter", "mode": "markers", "y": ys, "marker": {"size": size}}], "layout": layout}


def test_the_margin_holds_the_widest_label_of_the_padded_range() -> None:
    # one-digit labels need 36 px, '3.5' 46, '−0.2' 53 (measured in Chromium)
    assert left_margin(_figure([0.1, 4.1]), PANEL_PLOT_PX) == 36
    assert left_margin(_figure([0.08, 3.14]), PANEL_PLOT_PX) == 46
    assert left_margin(_figure([-0.25, 0.21]), PANEL_PLOT_PX) == 53
    # no estimate: a log axis, an empty figure, a range written with a power of ten; the margin is left as it was
    assert left_margin(_figure([1.0, 100.0], log=True), PANEL_PLOT_PX) is None
    assert left_margin(_figure([]), PANEL_PLOT_PX) is None
    fig = with_left_margin(_figure([0.0, 5e4]))
    assert fig["layout"]["margin"]["l"] == base_layout("x", "y")["margin"]["l"]
    # a range the figure sets is the range the labels come from
    fixed = _figure([0.1, 4.1])
    fixed["layout"]["yaxis"]["range"] = [-0.3, 0.3]
    assert left_margin(fixed, PANEL_PLOT_PX) == 53
