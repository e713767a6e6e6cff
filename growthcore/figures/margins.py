"""The left margin a panel's y axis needs, worked out before plotly.js draws it.

plotly.js makes room for the tick labels (automargin) by drawing the figure, measuring the labels and,
when they need another margin than the one it was given, drawing it all again. A series whose labels are
wider or narrower than the last one's cost that second draw on every redraw (about 45 ms of a series
switch here). So the figures ask for the margin their labels will need: the ticks are chosen as
plotly.js chooses them on a linear axis (a step of 2, 5 or 10 times a power of ten, the axis cut in
4 to 9 + 1 pieces of at least 40 px) over the range its autorange gives. Where no estimate is made (log
axes, and ranges plotly.js writes with a power of ten: an end at 10^4 or more, or both ends under
10^-3) automargin alone decides, as it does wherever the estimate falls short.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from growthcore.figures.common import unpacked

#: Height in px of the plotting area of a dashboard panel: a 300 px graph less its top (10) and bottom
#: (44: the x tick labels and title) margins. The trajectory panel is 320 px high.
PANEL_PLOT_PX = 246.0
TRAJECTORY_PLOT_PX = 266.0

#: Width in px (12 px labels of the figures' font, as Chromium draws them) of a tick label's characters,
#: and of the y title, the ticks and the gaps beside them: labels of one digit need a margin of 36 px,
#: '3.5' 46, '−0.2' 53 and '−0.03' 60.
CHAR_PX = {".": 3.5}
DIGIT_PX = 7.0
BESIDE_PX = 29.0

#: autorange's padding at each end: 5% of the axis and, for markers, 0.62 times the largest marker's size
#: (as measured: 3.7 px for markers of 6 px, 4.4 for 7).
PAD_SHARE = 0.05
PAD_PER_MARKER_PX = 0.62


def tick_step(span: float, plot_px: float) -> float:
    """The distance between ticks plotly.js picks for a linear axis of ``span`` drawn over ``plot_px``."""
    pieces = min(max(plot_px / 40.0, 4.0), 9.0) + 1.0
    rough = span / pieces
    base = 10.0 ** math.floor(math.log10(rough))
    return base * next(m for m in (2.0, 5.0, 10.0) if m > rough / base * (1 + 1e-12))


def tick_labels(lo: float, hi: float, plot_px: float) -> list[str] | None:
    """The labels of the ticks between ``lo`` and ``hi``; None where plotly.js writes them with a power
    of ten (an end of the range at 10^4 or more, or both under 10^-3 in size) or the range is empty."""
    if not (math.isfinite(lo) and math.isfinite(hi)) or hi <= lo:
        return None
    if abs(math.floor(math.log10(max(abs(lo), abs(hi))) + 0.01)) > 3:
        return None
    step = tick_step(hi - lo, plot_px)
    decimals = max(0, -math.floor(math.log10(step) + 1e-9))
    first, last = math.ceil(lo / step - 1e-9), math.floor(hi / step + 1e-9)
    values = [k * step for k in range(first, last + 1)]
    if not values:
        return None
    labels = []
    for v in values:
        text = f"{v:.{decimals}f}".rstrip("0").rstrip(".") if decimals else f"{v:.0f}"
        labels.append("0" if text in ("-0", "") else text.replace("-", "−"))
    return labels


def label_px(label: str) -> float:
    return sum(CHAR_PX.get(c, DIGIT_PX) for c in label)


def y_extent(fig: Mapping[str, Any]) -> tuple[float, float] | None:
    """Lowest and highest y of the figure's traces and y-referenced shapes (what autorange spans)."""
    ys: list[float] = []
    for trace in fig.get("data", []):
        if trace.get("visible", True) is not False:
            ys.extend(v for v in unpacked(trace.get("y") or []) if math.isfinite(v))
    for shape in fig.get("layout", {}).get("shapes") or []:
        if shape.get("yref") == "y":
            keys = ("yanchor",) if shape.get("ysizemode") == "pixel" else ("y0", "y1")
            ys.extend(float(shape[k]) for k in keys if isinstance(shape.get(k), (int, float)))
    return (min(ys), max(ys)) if ys else None


def largest_marker(fig: Mapping[str, Any]) -> float:
    """The size of the largest marker drawn (0 for a figure of lines only)."""
    sizes = [float(t.get("marker", {}).get("size", 6)) for t in fig.get("data", [])
             if "markers" in str(t.get("mode", "")) and unpacked(t.get("y") or [])]
    return max((v for v in sizes if math.isfinite(v)), default=0.0)


def left_margin(fig: Mapping[str, Any], plot_px: float) -> int | None:
    """The left margin (px) the y axis's title and tick labels will need; None where it is not estimated."""
    axis = fig.get("layout", {}).get("yaxis", {})
    if axis.get("type") == "log" or axis.get("visible") is False:
        return None
    given = axis.get("range")
    if given and axis.get("autorange") is not True and all(isinstance(v, (int, float)) for v in given):
        lo, hi = float(given[0]), float(given[1])
    else:
        extent = y_extent(fig)
        if extent is None:
            return None
        lo, hi = extent
        pad = PAD_SHARE * plot_px + PAD_PER_MARKER_PX * largest_marker(fig)
        if hi > lo and plot_px > 2 * pad:
            widen = (hi - lo) * pad / (plot_px - 2 * pad)
            lo, hi = lo - widen, hi + widen
    labels = tick_labels(lo, hi, plot_px)
    if not labels:
        return None
    return int(BESIDE_PX + max(label_px(s) for s in labels))


def with_left_margin(fig: dict[str, Any], plot_px: float = PANEL_PLOT_PX) -> dict[str, Any]:
    """``fig`` with the left margin its y labels will need (kept as it is where none is estimated)."""
    margin = left_margin(fig, plot_px)
    if margin is not None:
        layout = fig.setdefault("layout", {})
        layout["margin"] = {**layout.get("margin", {}), "l": margin}
    return fig
