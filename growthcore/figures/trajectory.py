"""Panel 3: observations over time, every fitted form, and the capacity line K with its drag handle."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.figures import theme
from growthcore.figures.common import (
    Figure,
    axis_title,
    base_layout,
    fit_styles,
    highlight_trace,
    non_positive_note,
    observation_trace,
    points_marker,
    preview_uid,
    rows_or_positions,
    state_axis,
)
from growthcore.figures.margins import TRAJECTORY_PLOT_PX, with_left_margin

#: ``layout.shapes``: the K line's drag handle comes first; the drag callback reads it. The line is a
#: trace: a shape on a graph whose shapes can be dragged takes every click along it.
CAPACITY_SHAPE = 0
CAPACITY_TRACE = "capacity"   # meta of the K line trace
#: The handle sits in the right margin, outside the plot area, so it never covers a point.
HANDLE_PX = (5, 23)
RIGHT_MARGIN = 62
#: How an increments fit's map may be drawn beside its one-step-ahead predictions.
PATH_CHOICES = ("none", "first", "last")
PATH_NAMES = {"first": "iterated from the first observation", "last": "iterated from the last observation"}


def trajectory_figure(data: Mapping[str, Any], used: Sequence[bool], fits: Sequence[Mapping[str, Any]],
                      capacity: float | None, labels: Mapping[str, Any], *, models: Sequence[str] | None = None,
                      scale: str | None = None, path_from: str = "none", editable: bool = True) -> Figure:
    """Observations (open circles when excluded), each fit as what it fits, and K as a line.

    ``fits`` are the plain fits of :func:`growthcore.figures.plain.fit_to_store`. A trajectory fit is drawn as its
    path (a difference form's map iterated on its grid, or the closed-form curve). An increments fit
    predicts each observation from the one before, so it is drawn as those one-step-ahead predictions;
    ``path_from`` ('first' or 'last') adds its map iterated from the first observation or from the
    last one onward, labelled as such. ``scale`` 'log' puts the state axis on a log scale.
    ``editable`` False leaves out the drag handle (exported figures).
    """
    if path_from not in PATH_CHOICES:
        path_from = "none"
    qty, vu, tu = labels["quantity"], labels.get("value_unit", ""), labels.get("time_unit", "")
    layout = base_layout(axis_title("Time", tu), axis_title(qty, vu), uirevision=labels.get("uirevision"))
    state_axis(layout["yaxis"], scale)
    n = len(data["t"])
    rows = rows_or_positions(data.get("rows"), n)
    obs = observation_trace(data["t"], data["p"], list(range(n)), rows, used, name="observed",
                            hover=f"t = %{{x:.4g}} {tu}<br>p = %{{y:.4g}} {vu}<br>row %{{customdata[1]}}"
                                  "<br>click to exclude or restore")
    traces: list[dict[str, Any]] = []
    styles = fit_styles(fits, models)
    for k, f in enumerate(fits):
        if f.get("status") != "converged":
            continue
        style = styles[k]
        if f["method"] == "increments" and f.get("predicted"):
            # customdata names the predicted observation, so a click here excludes that observation
            traces.append({
                "type": "scatter", "mode": "markers", "x": f["t"], "y": f["predicted"],
                "name": f"{f['label']}, one step ahead", "marker": points_marker(style, 7), "legendgroup": f["label"],
                "uid": preview_uid("one-step", f["label"]),
                "customdata": [[int(i), rows[int(i)]] for i in f.get("index", [])],
                "hovertemplate": f"{f['label']}<br>one step ahead from the observation before<br>"
                                 f"t = %{{x:.4g}} {tu}<br>p̂ = %{{y:.4g}} {vu}<br>row %{{customdata[1]}}"
                                 "<br>click to exclude or restore<extra></extra>",
            })
            path = f.get("path") if path_from == "first" else f.get("path_last") if path_from == "last" else None
            if path:
                trace = _line(f, style, path, f"{f['label']}, iterated map", tu, vu, width=1.5)
                trace["hovertemplate"] = trace["hovertemplate"].replace(
                    "iterated map<br>", f"map {PATH_NAMES[path_from]}<br>", 1)
                # in a figure's own key the form's marker stands for both; the title says what lines are
                trace.update(legendgroup=f["label"], showlegend=False, uid=preview_uid("iterated", f["label"]))
                traces.append(trace)
        elif f.get("path"):
            traces.append(_line(f, style, f["path"], f["label"], tu, vu, width=2))
    layout["shapes"] = []
    if capacity is not None:
        xs = [v for t in (data["t"], *(tr["x"] for tr in traces)) for v in t if v is not None]
        traces.insert(0, capacity_trace(capacity, (min(xs), max(xs)) if xs else (0.0, 1.0)))
        layout["annotations"] = [capacity_label(capacity, vu, scale)]
        if editable:
            layout["shapes"].append(capacity_handle(capacity))
            layout["margin"] = dict(layout["margin"], r=RIGHT_MARGIN)
    layout["annotations"] = [*layout.get("annotations", []), *non_positive_note(data["p"], scale)]
    guard = data_range_guard(data["p"], capacity, [t["y"] for t in traces])
    if guard is not None:
        layout["yaxis"]["range"] = guard
        layout["annotations"].append({"text": "K or a fitted path lies far outside the data: the axis shows the data",
                                      "xref": "paper", "yref": "paper", "x": 1.0, "y": 1.0, "xanchor": "right",
                                      "yanchor": "bottom", "showarrow": False,
                                      "font": {"size": 11, "color": theme.MUTED}})
    return with_left_margin({"data": [*traces, obs, highlight_trace()], "layout": layout}, TRAJECTORY_PLOT_PX)


def _line(f: Mapping[str, Any], style: Mapping[str, str], path: Mapping[str, Any], name: str, tu: str, vu: str,
          *, width: float) -> dict[str, Any]:
    difference = not f["model"].endswith("-curve")
    return {
        "type": "scatter", "mode": "lines+markers" if difference else "lines", "x": path["t"], "y": path["p"],
        "name": name, "line": {"color": style["colour"], "dash": style["dash"], "width": width, "shape": "linear"},
        "marker": {"size": 3, "color": style["colour"]},
        "hovertemplate": f"{name}<br>t = %{{x:.4g}} {tu}<br>p̂ = %{{y:.4g}} {vu}<extra></extra>",
    }


def capacity_trace(capacity: float, x_range: tuple[float, float]) -> dict[str, Any]:
    """The horizontal K line across the drawn times; it takes no hover and no clicks."""
    return {"type": "scatter", "mode": "lines", "x": list(x_range), "y": [capacity, capacity], "name": "K estimate",
            "meta": CAPACITY_TRACE, "hoverinfo": "skip",
            "line": {"color": theme.CAPACITY, "width": 2.5, "dash": "dash"}}


def capacity_label(capacity: float, unit: str, scale: str | None = None) -> dict[str, Any]:
    """'K = 4.1 g/L' just under the line at its left end (on a log axis plotly places it by log10 K)."""
    y = math.log10(capacity) if scale == "log" and capacity > 0 else capacity
    return {"text": f"K = {capacity:.4g} {unit}".strip(), "xref": "paper", "x": 0.0, "xanchor": "left",
            "yref": "y", "y": y, "yanchor": "top", "showarrow": False,
            "font": {"color": theme.CAPACITY, "size": 12}, "bgcolor": "rgba(255,255,255,0.7)"}


def capacity_handle(capacity: float) -> dict[str, Any]:
    """A small tab at the K line's right end, in the margin; dragging it reports a new ``yanchor``."""
    return {
        "type": "rect", "editable": True, "xref": "paper", "xsizemode": "pixel", "xanchor": 1,
        "x0": HANDLE_PX[0], "x1": HANDLE_PX[1], "yref": "y", "ysizemode": "pixel", "yanchor": capacity,
        "y0": -8, "y1": 8, "fillcolor": theme.CAPACITY, "opacity": 0.9, "layer": "above",
        "line": {"color": theme.CAPACITY, "width": 1}, "name": "drag to move K",
    }


def capacity_from_relayout(relayout: Mapping[str, Any] | None) -> float | None:
    """The new K from a drag of the K handle, or None when the event is about something else."""
    if not relayout:
        return None
    key = f"shapes[{CAPACITY_SHAPE}].yanchor"
    if relayout.get(key) is not None:
        return float(relayout[key])
    shapes = relayout.get("shapes")
    if isinstance(shapes, list) and len(shapes) > CAPACITY_SHAPE and shapes[CAPACITY_SHAPE].get("yanchor") is not None:
        return float(shapes[CAPACITY_SHAPE]["yanchor"])
    return None


#: Values more than this many data ranges beyond the data do not set the axis.
FAR_RANGES = 10.0


def data_range_guard(observed: Sequence[float | None], capacity: float | None,
                     paths: Sequence[Sequence[float | None]]) -> list[float] | None:
    """A y range around the data when K or a path would stretch the axis far past them (None otherwise)."""
    obs = [float(v) for v in observed if v is not None and v == v and abs(v) != float("inf")]
    if not obs:
        return None
    lo, hi = min(obs), max(obs)
    span = (hi - lo) or abs(hi) or 1.0
    limit_hi, limit_lo = hi + FAR_RANGES * span, lo - FAR_RANGES * span
    others = [float(v) for path in paths for v in path if v is not None]
    if capacity is not None:
        others.append(float(capacity))
    if not any(v != v or v > limit_hi or v < limit_lo for v in others):
        return None
    shown = [v for v in others if v == v and limit_lo <= v <= limit_hi] + obs
    top, bottom = max(shown), min(shown)
    pad = 0.05 * ((top - bottom) or 1.0)
    return [max(bottom - pad, 0.0) if bottom >= 0 else bottom - pad, top + pad]

