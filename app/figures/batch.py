"""Batch pictures: an overview grid of small multiples and a plate map.

Both take the plain data of :func:`growthcore.batch.views.overview_panels` and
:func:`growthcore.batch.views.plate_values` and return plotly figure dicts. Every series panel and
plate cell carries the series id in ``customdata`` so that a click can open that series.
"""

from __future__ import annotations

import math
from typing import Any, Mapping, Sequence

from app import theme
from growthcore.batch.plate import parse_well, plate_format, well_name

Figure = dict[str, Any]
FAILED_FILL = "rgba(213, 94, 0, 0.10)"   # background of a panel whose fit failed
FIT_COLOUR = theme.FORM_COLOURS[0]
MAX_PANELS = 96


def overview_grid(panels: Sequence[Mapping[str, Any]], *, columns: int = 8, max_panels: int = MAX_PANELS,
                  title: str = "") -> Figure:
    """Small multiples: observed points and the fitted path of each series; failed fits marked.

    Panels beyond ``max_panels`` are left out and the title says how many are shown.
    """
    shown = list(panels[:max_panels])
    n = len(shown)
    cols = max(1, min(columns, n or 1))
    rows = max(1, math.ceil(n / cols))
    gap_x, gap_y = 0.02, 0.05
    width = (1.0 - gap_x * (cols - 1)) / cols
    height = (1.0 - gap_y * (rows - 1)) / rows
    data: list[dict[str, Any]] = []
    layout: dict[str, Any] = {
        "font": {"family": theme.FONT, "color": theme.INK, "size": 10},
        "paper_bgcolor": theme.PAPER, "plot_bgcolor": theme.PAPER, "showlegend": False,
        "margin": {"l": 8, "r": 8, "t": 34, "b": 8}, "hovermode": "closest",
        "height": max(220, 120 * rows), "annotations": [], "shapes": [],
    }
    heading = title or "Series overview"
    if len(panels) > n:
        heading += f" (first {n} of {len(panels)} series)"
    layout["title"] = {"text": heading, "x": 0.0, "xanchor": "left", "font": {"size": 13}}
    for i, panel in enumerate(shown):
        r, c = divmod(i, cols)
        suffix = "" if i == 0 else str(i + 1)
        x0 = c * (width + gap_x)
        y1 = 1.0 - r * (height + gap_y)
        axis = {"showticklabels": False, "showgrid": False, "zeroline": False, "showline": True,
                "linecolor": theme.GRID, "ticks": ""}
        layout[f"xaxis{suffix}"] = {**axis, "domain": [x0, x0 + width], "anchor": f"y{suffix}"}
        layout[f"yaxis{suffix}"] = {**axis, "domain": [y1 - height * 0.82, y1], "anchor": f"x{suffix}"}
        sid = str(panel["series"])
        used = list(panel.get("used", [True] * len(panel["t"])))
        data.append({
            "type": "scatter", "mode": "markers", "x": list(panel["t"]), "y": list(panel["p"]),
            "xaxis": f"x{suffix}", "yaxis": f"y{suffix}", "name": sid, "meta": "points",
            "marker": {"size": 3, "color": [theme.INK if u else theme.MUTED for u in used]},
            "customdata": [sid] * len(panel["t"]), "hovertemplate": f"{sid}<br>t = %{{x}}<br>p = %{{y}}<extra></extra>",
        })
        failed = panel.get("status") == "failed"
        if not failed and panel.get("fit_t"):
            data.append({
                "type": "scatter", "mode": "lines", "x": list(panel["fit_t"]), "y": list(panel["fit_p"]),
                "xaxis": f"x{suffix}", "yaxis": f"y{suffix}", "name": f"{sid} fit", "meta": "fit",
                "line": {"color": FIT_COLOUR, "width": 1.5}, "customdata": [sid] * len(panel["fit_t"]),
                "hoverinfo": "skip",
            })
        label = f"{sid} · fit failed" if failed else sid
        layout["annotations"].append({
            "text": label, "showarrow": False, "xref": "paper", "yref": "paper", "x": x0, "y": y1,
            "xanchor": "left", "yanchor": "bottom", "font": {"size": 10, "color": theme.CAPACITY if failed else theme.INK},
            "hovertext": str(panel.get("message", "")) if failed else None,
        })
        if failed:
            layout["shapes"].append({"type": "rect", "xref": "paper", "yref": "paper", "x0": x0, "x1": x0 + width,
                                     "y0": y1 - height * 0.82, "y1": y1, "fillcolor": FAILED_FILL,
                                     "line": {"width": 1, "color": theme.CAPACITY}, "layer": "below"})
    return {"data": data, "layout": layout}


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
            "marker": {"symbol": "x-thin", "size": 12 if n_cols == 12 else 7, "line": {"width": 2, "color": theme.CAPACITY}},
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
