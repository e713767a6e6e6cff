"""Dynamics panels: the cobweb of a fitted map, the sweep (long-run states against the rate) and the
forecast band drawn on the trajectory panel.

Pure functions of the plain dicts the engine writes (``Cobweb.to_dict``, ``Sweep.to_dict``,
``Forecast.points``), so they are tested without a browser. Colours are from the Okabe–Ito palette
in growthcore.figures.theme; stable and unstable equilibria differ by marker fill as well as colour.
"""

from __future__ import annotations

import copy
import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from growthcore.figures import theme
from growthcore.figures.common import Figure, axis_title, base_layout, message_figure, packed
from growthcore.figures.margins import TRAJECTORY_PLOT_PX, with_left_margin

MAP = "#0072B2"        # blue: the fitted map and the sweep points
PATH = "#E69F00"       # orange: the cobweb staircase
BAND = "rgba(0, 114, 178, 0.18)"


def _band_fill(colour: str, alpha: float = 0.18) -> str:
    c = colour.lstrip("#")
    if len(c) != 6:
        return BAND
    r, g, b = (int(c[i:i + 2], 16) for i in (0, 2, 4))
    return f"rgba({r}, {g}, {b}, {alpha})"


def cobweb_figure(web: Mapping[str, Any] | None, labels: Mapping[str, Any]) -> Figure:
    """The map p ↦ f(p), the diagonal p_{n+1} = p_n, the staircase from the starting level and the
    equilibria (filled: stable, open: unstable)."""
    if not web or not web.get("p"):
        return message_figure("The cobweb applies to difference equations: fit a difference form to see it.")
    unit = labels.get("value_unit", "")
    qty = labels.get("quantity", "state")
    layout = base_layout(axis_title(f"{qty} at step n", unit), axis_title(f"{qty} at step n + 1", unit),
                         uirevision=labels.get("uirevision"), title=labels.get("title", ""))
    p = list(web["p"])
    top = max((v for v in p if v is not None), default=1.0)
    traces: list[dict[str, Any]] = [
        {"type": "scatter", "mode": "lines", "x": [0.0, top], "y": [0.0, top], "name": "no change (p_{n+1} = p_n)",
         "line": {"color": theme.REFERENCE, "dash": "dot", "width": 1.5}, "hoverinfo": "skip"},
        {"type": "scatter", "mode": "lines", "x": packed(p), "y": packed(web["f"]), "name": "fitted map f(p)",
         "line": {"color": MAP, "width": 2.5},
         "hovertemplate": "p_n = %{x:.4g}<br>p_{n+1} = %{y:.4g}<extra>fitted map</extra>"},
        {"type": "scatter", "mode": "lines", "x": list(web["stairs_x"]), "y": list(web["stairs_y"]),
         "name": "path from the starting level", "line": {"color": PATH, "width": 1.5, "dash": "dash"},
         "hoverinfo": "skip"},
    ]
    eq = [e for e in web.get("equilibria", ()) if e.get("value") is not None]
    for stable in (True, False):
        chosen = [e for e in eq if bool(e.get("stable")) == stable]
        if not chosen:
            continue
        traces.append({
            "type": "scatter", "mode": "markers", "x": [e["value"] for e in chosen], "y": [e["value"] for e in chosen],
            "name": "stable equilibrium" if stable else "unstable equilibrium",
            # an open symbol is drawn in the marker's colour (its ring), so both take the capacity colour
            "marker": {"size": 11, "color": theme.CAPACITY, "symbol": "circle" if stable else "circle-open",
                       "line": {"width": 2, "color": theme.CAPACITY}},
            "customdata": [[e.get("multiplier")] for e in chosen],
            "hovertemplate": "p* = %{x:.4g}<br>f'(p*) = %{customdata[0]:.3g}<extra></extra>",
            "cliponaxis": False,  # p* = 0 sits on both axes: clipped, its circle would be a quarter
        })
    finite_f = [v for v in web["f"] if v is not None]
    y_top = max([top, *finite_f]) if finite_f else top
    layout["yaxis"]["range"] = [min(0.0, min(finite_f, default=0.0)), 1.05 * y_top]
    layout["xaxis"]["range"] = [0.0, top]
    return with_left_margin({"data": traces, "layout": layout})


#: Rows of state cells in the sweep: a cell is about a pixel high in the dashboard's panel (and the
#: states of one rate value never fall in the same cell unless they are within a pixel of each other).
SWEEP_ROWS = 200


def sweep_cells(rate: Sequence[float | None], states: Sequence[float | None], rows: int = SWEEP_ROWS,
                grid: Sequence[float | None] = ()) -> tuple[list[float], list[float], list[float | None], float]:
    """The long-run states as cells of a grid: each rate value (a column; every value of ``grid`` too,
    so that one whose states all ran off stays an empty column) against ``rows`` evenly spaced state
    values from the lowest state to the highest; ``x, y, z`` in columns (z = 1 where a state falls, None
    for the cells that only fix the grid) and the rows' spacing.

    A browser draws the cells as one image, so the cost of the plot does not grow with the states shown
    (as SVG markers, 800 states took about 100 ms to redraw here)."""
    r = np.array([np.nan if v is None else v for v in rate], dtype=float)
    v = np.array([np.nan if x is None else x for x in states], dtype=float)
    if r.shape != v.shape:
        raise ValueError("the sweep's rates and states differ in length")
    ok = np.isfinite(r) & np.isfinite(v)
    if not ok.any():
        return [], [], [], 0.0
    r, v = r[ok], v[ok]
    lo, hi = float(v.min()), float(v.max())
    step = (hi - lo) / (rows - 1) if hi > lo else max(abs(lo), 1.0) * 1e-3
    extra = np.array([g for g in grid if g is not None and math.isfinite(g)], dtype=float)
    columns = np.unique(np.concatenate([r, extra]))
    filled = np.zeros((columns.size, rows if hi > lo else 1), dtype=bool)
    filled[np.searchsorted(columns, r), np.rint((v - lo) / step).astype(np.int64)] = True
    # cells that only fix the grid (every column and every row present, so plotly.js makes each cell the
    # same size and leaves no state in a cell stretched to its neighbours), drawn as gaps
    fixing = np.zeros_like(filled)
    fixing[:, 0] = fixing[0, :] = True
    col_f, row_f = np.nonzero(filled)
    col_g, row_g = np.nonzero(fixing & ~filled)
    col, row = np.concatenate([col_f, col_g]), np.concatenate([row_f, row_g])
    z: list[float | None] = [1.0] * col_f.size + [None] * col_g.size
    return columns[col].tolist(), (lo + row * step).tolist(), z, step


def sweep_figure(sweep: Mapping[str, Any] | None, labels: Mapping[str, Any]) -> Figure:
    """Long-run states against the rate (cells of the rate grid by rows of state), with the fitted
    value (line) and its 95% interval (shaded)."""
    if not sweep or not sweep.get("rate"):
        return message_figure("The sweep applies to difference equations with a rate constant.")
    name = sweep["parameter"]
    unit = labels.get("rate_unit", "per step")
    layout = base_layout(axis_title(f"rate {name}", unit), axis_title(f"long-run {labels.get('quantity', 'state')}",
                                                                         labels.get("value_unit", "")),
                         uirevision=labels.get("uirevision"), title=labels.get("title", ""))
    x, y, z, step = sweep_cells(sweep["rate"], sweep["states"], grid=sweep.get("grid") or ())
    traces: list[dict[str, Any]] = [{
        "type": "heatmap", "x": packed(x), "y": packed(y), "z": packed(z), "name": "long-run states",
        "colorscale": [[0.0, MAP], [1.0, MAP]], "zmin": 0.0, "zmax": 1.0, "showscale": False, "zsmooth": False,
        "hoverongaps": False,
        "hovertemplate": f"{name} = %{{x:.4g}}<br>state = %{{y:.4g}} ± {step / 2:.2g}<extra></extra>",
    }]
    for axis, values in (("xaxis", x), ("yaxis", y)):  # a cell's width of margin would hide the edge states
        if values:
            pad = 0.04 * (max(values) - min(values) or 1.0)
            layout[axis].update(range=[min(values) - pad, max(values) + pad], autorange=False)
    shapes: list[dict[str, Any]] = []
    interval = sweep.get("interval")
    if interval and all(v is not None for v in interval):
        shapes.append({"type": "rect", "xref": "x", "yref": "paper", "x0": interval[0], "x1": interval[1],
                       "y0": 0, "y1": 1, "fillcolor": _band_fill(theme.CAPACITY, 0.15), "line": {"width": 0},
                       "layer": "below"})
    estimate = sweep.get("estimate")
    if estimate is not None:
        shapes.append({"type": "line", "xref": "x", "yref": "paper", "x0": estimate, "x1": estimate, "y0": 0, "y1": 1,
                       "line": {"color": theme.CAPACITY, "width": 2}})
        text = f"fitted {name} = {estimate:.4g}" + (
            f"<br>95% interval {interval[0]:.4g} to {interval[1]:.4g}" if interval and None not in interval else "")
        layout["annotations"] = [{"x": estimate, "xref": "x", "y": 1.0, "yref": "paper", "text": text,
                                  "showarrow": False, "xanchor": "left", "yanchor": "top", "align": "left",
                                  "font": {"size": 11, "color": theme.INK}, "bgcolor": "rgba(255,255,255,0.8)"}]
    layout["shapes"] = shapes
    return with_left_margin({"data": traces, "layout": layout})


def forecast_band_traces(points: Sequence[Mapping[str, Any]], *, colour: str = MAP, name: str = "forecast",
                         level: float = 0.95) -> list[dict[str, Any]]:
    """Three traces: the band's lower edge, its upper edge filled down to it, and the point forecast."""
    t = [pt["t"] for pt in points]
    pct = f"{100 * level:.0f}%"
    return [
        {"type": "scatter", "mode": "lines", "x": t, "y": [pt["lo"] for pt in points], "name": f"{name}: {pct} band",
         "line": {"width": 0, "color": colour}, "showlegend": False, "hoverinfo": "skip", "legendgroup": name},
        {"type": "scatter", "mode": "lines", "x": t, "y": [pt["hi"] for pt in points],
         "name": f"{name}: {pct} prediction band", "fill": "tonexty", "fillcolor": _band_fill(colour),
         "line": {"width": 0, "color": colour}, "hoverinfo": "skip", "legendgroup": name},
        {"type": "scatter", "mode": "lines+markers", "x": t, "y": [pt["p"] for pt in points], "name": name,
         "line": {"color": colour, "dash": "dash", "width": 2}, "marker": {"size": 3, "color": colour},
         "customdata": [[pt["lo"], pt["hi"]] for pt in points], "legendgroup": name,
         "hovertemplate": "t = %{x:.4g}<br>forecast %{y:.4g}<br>band %{customdata[0]:.4g} to %{customdata[1]:.4g}"
                          "<extra></extra>"},
    ]


def with_forecast_band(figure: Mapping[str, Any], points: Sequence[Mapping[str, Any]], *, colour: str = MAP,
                       name: str = "forecast", level: float = 0.95, last_observed: float | None = None) -> Figure:
    """A copy of ``figure`` (e.g. the trajectory panel) with the band added and, when given, a line
    at the last observation so the extrapolated part is plain to see."""
    out = copy.deepcopy(dict(figure))
    out["data"] = [*out.get("data", []), *forecast_band_traces(points, colour=colour, name=name, level=level)]
    if last_observed is not None:
        layout = dict(out.get("layout", {}))
        layout["shapes"] = [*layout.get("shapes", []), {
            "type": "line", "xref": "x", "yref": "paper", "x0": last_observed, "x1": last_observed, "y0": 0, "y1": 1,
            "line": {"color": theme.MUTED, "dash": "dot", "width": 1}}]
        layout["annotations"] = [*layout.get("annotations", []), {
            "x": last_observed, "xref": "x", "y": 0.02, "yref": "paper", "text": "forecast →", "showarrow": False,
            "xanchor": "left", "font": {"size": 11, "color": theme.MUTED}}]
        out["layout"] = layout
    return with_left_margin(out, TRAJECTORY_PLOT_PX)
