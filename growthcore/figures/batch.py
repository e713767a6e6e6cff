"""Batch pictures: an overview grid of small multiples and a plate map.

Both take the plain data of :func:`growthcore.batch.views.overview_panels` and
:func:`growthcore.batch.views.plate_values` and return plotly figure dicts. Every series panel and
plate cell carries the series id in ``customdata`` so that a click can open that series.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from growthcore.batch.plate import parse_well, plate_format, well_name
from growthcore.figures import theme
from growthcore.numbers import finite_or_none

Figure = dict[str, Any]
Scales = tuple[tuple[float, float], tuple[float, float]]  # (time range, value range)
FAILED_FILL = "rgba(213, 94, 0, 0.10)"   # background of a panel whose fit failed
FIT_COLOUR = theme.FORM_COLOURS[0]
MAX_PANELS = 96
#: Observations drawn per panel at most: a panel is about a hundred pixels wide, and the browser's
#: drawing time grows with the number of markers (every excluded point is always drawn).
MAX_MARKERS = 48


def overview_grid(panels: Sequence[Mapping[str, Any]], *, columns: int = 8, max_panels: int = MAX_PANELS,
                  title: str = "", scales: Scales | None = None) -> Figure:
    """Small multiples: observed points and the fitted path of each series; failed fits marked.

    Every panel is a cell of one pair of hidden axes spanning [0, 1] × [0, 1] (paper and data
    coordinates coincide), so the whole grid is three traces however many series it shows: a page
    of 96 draws in a fraction of the time 96 subplots take. ``scales`` gives one (time, value)
    range for every panel; without it each panel spans its own data. ``layout.meta.panels`` lists
    each panel's series, box [x0, x1, y0, y1], status and whether a fitted path is drawn. Panels
    beyond ``max_panels`` are left out and the title says how many are shown.
    """
    shown = list(panels[:max_panels])
    n = len(shown)
    cols = max(1, min(columns, n or 1))
    rows = max(1, math.ceil(n / cols))
    gap_x, gap_y = 0.02, 0.05
    width = (1.0 - gap_x * (cols - 1)) / cols
    height = (1.0 - gap_y * (rows - 1)) / rows
    hidden = {"range": [0, 1], "visible": False, "fixedrange": True}
    layout: dict[str, Any] = {
        "font": {"family": theme.FONT, "color": theme.INK, "size": 10},
        "paper_bgcolor": theme.PAPER, "plot_bgcolor": theme.PAPER, "showlegend": False,
        "margin": {"l": 8, "r": 8, "t": 34, "b": 8}, "hovermode": "closest",
        "height": max(220, 120 * rows), "annotations": [], "shapes": [],
        "xaxis": {**hidden, "domain": [0, 1]}, "yaxis": {**hidden, "domain": [0, 1]},
    }
    heading = title or "Series overview"
    if len(panels) > n:
        heading += f" (first {n} of {len(panels)} series)"
    layout["title"] = {"text": heading, "x": 0.0, "xanchor": "left", "font": {"size": 13}}
    points: dict[str, list[Any]] = {"x": [], "y": [], "customdata": [], "color": []}
    fit_x: list[float | None] = []
    fit_y: list[float | None] = []
    fit_ids: list[str | None] = []
    frame_x: list[float | None] = []
    frame_y: list[float | None] = []
    meta = []
    thinned = False
    for i, panel in enumerate(shown):
        r, c = divmod(i, cols)
        x0, y1 = c * (width + gap_x), 1.0 - r * (height + gap_y)
        box = [x0, x0 + width, y1 - height * 0.82, y1]
        sid = str(panel["series"])
        to_x, to_y = _placement(panel, box, scales)
        used = list(panel.get("used", [True] * len(panel["t"])))
        keep = _markers_kept(len(panel["t"]), used)
        thinned = thinned or len(keep) < len(panel["t"])
        for k in keep:
            t, p, u = panel["t"][k], panel["p"][k], used[k]
            if not (_finite(t) and _finite(p)):
                continue
            points["x"].append(to_x(t))
            points["y"].append(to_y(p))
            points["customdata"].append([sid, t, p])
            points["color"].append(theme.INK if u else theme.MUTED)
        failed = panel.get("status") == "failed"
        fitted = not failed and bool(panel.get("fit_t"))
        if fitted:
            for t, p in zip(panel["fit_t"], panel["fit_p"], strict=True):
                ok = _finite(t) and _finite(p)
                fit_x.append(to_x(t) if ok else None)
                fit_y.append(to_y(p) if ok else None)
                fit_ids.append(sid)
            fit_x.append(None)
            fit_y.append(None)
            fit_ids.append(None)
        frame_x += [box[0], box[0], box[1], None]
        frame_y += [box[3], box[2], box[2], None]
        label = f"{sid} · fit failed" if failed else sid
        layout["annotations"].append({
            "text": label, "showarrow": False, "xref": "paper", "yref": "paper", "x": x0, "y": y1,
            "xanchor": "left", "yanchor": "bottom",
            "font": {"size": 10, "color": theme.CAPACITY if failed else theme.INK},
            "hovertext": str(panel.get("message", "")) if failed else None,
        })
        if failed:
            layout["shapes"].append({"type": "rect", "xref": "paper", "yref": "paper", "x0": box[0], "x1": box[1],
                                     "y0": box[2], "y1": box[3], "fillcolor": FAILED_FILL,
                                     "line": {"width": 1, "color": theme.CAPACITY}, "layer": "below"})
        meta.append({"series": sid, "box": box, "status": panel.get("status"), "fitted": fitted})
    layout["meta"] = {"panels": meta}
    if thinned:
        layout["title"]["text"] += f" · at most {MAX_MARKERS} observations drawn per panel"
    data: list[dict[str, Any]] = [
        {"type": "scatter", "mode": "lines", "x": frame_x, "y": frame_y, "meta": "frames", "name": "frames",
         "line": {"color": theme.GRID, "width": 1}, "hoverinfo": "skip"},
        {"type": "scatter", "mode": "markers", "x": points["x"], "y": points["y"], "name": "observations",
         "meta": "points", "marker": {"size": 3, "color": points["color"]}, "customdata": points["customdata"],
         "hovertemplate": "%{customdata[0]}<br>t = %{customdata[1]:.4g}<br>p = %{customdata[2]:.4g}<extra></extra>"},
        {"type": "scatter", "mode": "lines", "x": fit_x, "y": fit_y, "name": "fitted paths", "meta": "fit",
         "line": {"color": FIT_COLOUR, "width": 1.5}, "customdata": fit_ids, "hoverinfo": "skip",
         "connectgaps": False},
    ]
    return {"data": data, "layout": layout}


def _markers_kept(n: int, used: Sequence[bool]) -> list[int]:
    """Evenly spaced positions, at most MAX_MARKERS, plus every excluded point."""
    if n <= MAX_MARKERS:
        return list(range(n))
    step = (n - 1) / (MAX_MARKERS - 1)
    keep = {round(j * step) for j in range(MAX_MARKERS)} | {k for k in range(n) if not used[k]}
    return sorted(keep)


def _placement(panel: Mapping[str, Any], box: Sequence[float],
               scales: Scales | None) -> tuple[Callable[[float], float], Callable[[float], float]]:
    """Maps from a panel's time and value to grid coordinates inside its box."""
    if scales is None:
        ranges = data_ranges([panel])
        scales = ranges[0] if ranges is not None else ((0.0, 1.0), (0.0, 1.0))
    (t0, t1), (p0, p1) = scales
    sx = (box[1] - box[0]) / ((t1 - t0) or 1.0)
    sy = (box[3] - box[2]) / ((p1 - p0) or 1.0)
    return (lambda t: box[0] + (t - t0) * sx), (lambda p: box[2] + (p - p0) * sy)


def data_ranges(panels: Sequence[Mapping[str, Any]]) -> tuple[Scales, Scales] | None:
    """(padded, plain) time and value ranges of the panels' observations and fitted paths.

    The padded ranges leave a margin of 3% of the span in time and 6% in value on each side;
    None when the panels hold no finite time or value.
    """
    ts = [v for p in panels for v in p["t"] if _finite(v)]
    ps = [v for p in panels for v in [*p["p"], *(p.get("fit_p") or [])] if _finite(v)]
    if not ts or not ps:
        return None
    plain = (min(ts), max(ts)), (min(ps), max(ps))
    return (_pad(plain[0], 0.03), _pad(plain[1], 0.06)), plain


def _pad(span: tuple[float, float], pad: float) -> tuple[float, float]:
    lo, hi = span
    margin = pad * ((hi - lo) or abs(hi) or 1.0)
    return lo - margin, hi + margin


def _finite(v: float | None) -> bool:
    """True for a finite number (a point that can be placed); False for None, NaN and infinity."""
    return finite_or_none(v) is not None


def plate_map(values: Mapping[str, Mapping[str, Any]], *, quantity: str, title: str = "") -> Figure:
    """A 96- or 384-well heat map of ``quantity``; failed wells hatched grey, empty wells blank.

    ``values`` maps well id -> {"value", "status", "message"}. Raises ValueError when the ids are
    not plate wells (check with :func:`growthcore.batch.plate.plate_format` first).
    """
    fmt = plate_format(list(values))
    if fmt is None:
        raise ValueError("the series ids are not plate wells (A1 … H12 or A1 … P24): no plate map")
    n_rows, n_cols = fmt
    z: list[list[float | None]] = [[None] * n_cols for _ in range(n_rows)]
    ids: list[list[str]] = [[well_name(r, c) for c in range(n_cols)] for r in range(n_rows)]
    text: list[list[str]] = [["empty well"] * n_cols for _ in range(n_rows)]
    failed_x: list[int] = []
    failed_y: list[str] = []
    failed_ids: list[str] = []
    row_labels = [chr(ord("A") + r) for r in range(n_rows)]
    for well, entry in values.items():
        pos = parse_well(well)
        assert pos is not None
        r, c = pos
        ids[r][c] = well
        v = entry.get("value")
        z[r][c] = v
        if entry.get("status") != "failed":
            text[r][c] = f"{quantity} = {v:.4g}" if v is not None else f"{quantity} not available"
        else:
            text[r][c] = f"fit failed: {entry.get('message', '')}"
            failed_x.append(c + 1)
            failed_y.append(row_labels[r])
            failed_ids.append(well)
    data: list[dict[str, Any]] = [{
        "type": "heatmap", "z": z, "x": list(range(1, n_cols + 1)), "y": row_labels, "customdata": ids,
        "text": text, "hovertemplate": "%{customdata}: %{text}<extra></extra>", "colorscale": "Viridis",
        "colorbar": {"title": {"text": quantity}}, "xgap": 2, "ygap": 2, "hoverongaps": False, "meta": "plate",
    }]
    if failed_ids:
        data.append({
            "type": "scatter", "mode": "markers", "x": failed_x, "y": failed_y, "customdata": failed_ids,
            "marker": {"symbol": "x-thin", "size": 12 if n_cols == 12 else 7,
                       "line": {"width": 2, "color": theme.CAPACITY}},
            "name": "fit failed", "hovertemplate": "%{customdata}: fit failed<extra></extra>", "meta": "failed",
        })
    layout = {
        "title": {"text": title or f"Plate map: {quantity}", "x": 0.0, "xanchor": "left", "font": {"size": 13}},
        "xaxis": {"side": "top", "dtick": 1, "showgrid": False, "zeroline": False, "constrain": "domain"},
        "yaxis": {"autorange": "reversed", "showgrid": False, "zeroline": False, "scaleanchor": "x"},
        "font": {"family": theme.FONT, "color": theme.INK, "size": 11},
        "paper_bgcolor": theme.PAPER, "plot_bgcolor": theme.PAPER, "showlegend": bool(failed_ids),
        "legend": {"orientation": "h", "y": -0.05}, "margin": {"l": 30, "r": 10, "t": 60, "b": 20},
    }
    return {"data": data, "layout": layout}
