"""Panel 3: observations over time, every fitted form's path, and the draggable capacity line."""

from __future__ import annotations

from typing import Any, Mapping, Sequence

from app import theme
from app.figures.common import (Figure, axis_title, base_layout, fit_styles, highlight_trace, observation_trace,
                                rows_or_positions)

#: Position of the capacity line in ``layout.shapes``; the drag callback reads ``shapes[0].y0``.
CAPACITY_SHAPE = 0


def trajectory_figure(data: Mapping[str, Any], used: Sequence[bool], fits: Sequence[Mapping[str, Any]],
                      capacity: float | None, labels: Mapping[str, Any]) -> Figure:
    """Observations (open circles when excluded), fitted paths, and K as a horizontal line.

    ``fits`` are the plain fits of :func:`app.state.fit_to_store`; a difference form's path is the
    map iterated on its grid (from the fitted p0, or from the first observation for the increments
    method), a curve's is the closed form.
    """
    qty, vu, tu = labels["quantity"], labels.get("value_unit", ""), labels.get("time_unit", "")
    layout = base_layout(axis_title("Time", tu), axis_title(qty, vu), uirevision=labels.get("uirevision"))
    n = len(data["t"])
    rows = rows_or_positions(data.get("rows"), n)
    obs = observation_trace(data["t"], data["p"], list(range(n)), rows, used, name="observed",
                            hover=f"t = %{{x:.4g}} {tu}<br>p = %{{y:.4g}} {vu}<br>row %{{customdata[1]}}"
                                  "<br>click to exclude or restore")
    traces: list[dict[str, Any]] = []
    styles = fit_styles(fits)
    for k, f in enumerate(fits):
        if f.get("status") != "converged" or not f.get("path"):
            continue
        colour, dash = styles[k]["colour"], styles[k]["dash"]
        difference = not f["model"].endswith("-curve")
        note = " — simulated from the first observation" if f["method"] == "increments" else ""
        traces.append({
            "type": "scatter", "mode": "lines+markers" if difference else "lines",
            "x": f["path"]["t"], "y": f["path"]["p"], "name": f["label"],
            "line": {"color": colour, "dash": dash, "width": 2, "shape": "linear"},
            "marker": {"size": 3, "color": colour},
            "hovertemplate": f"{f['label']}{note}<br>t = %{{x:.4g}} {tu}<br>p̂ = %{{y:.4g}} {vu}<extra></extra>",
        })
    layout["shapes"] = []
    if capacity is not None:
        layout["shapes"].append(capacity_shape(capacity, vu))
    return {"data": [*traces, obs, highlight_trace()], "layout": layout}


def capacity_shape(capacity: float, unit: str) -> dict[str, Any]:
    """The horizontal K line; editable so that dragging it reports a new ``y0`` through relayoutData."""
    return {
        "type": "line", "xref": "paper", "x0": 0, "x1": 1, "yref": "y", "y0": capacity, "y1": capacity,
        "line": {"color": theme.CAPACITY, "width": 3, "dash": "dash"},
        "editable": True,
        "label": {"text": f"K estimate = {capacity:.4g} {unit} — drag to move",
                  "textposition": "start", "xanchor": "left", "yanchor": "top", "font": {"color": theme.CAPACITY, "size": 12}},
    }


def capacity_from_relayout(relayout: Mapping[str, Any] | None) -> float | None:
    """The new K from a drag of the capacity line, or None when the event is about something else."""
    if not relayout:
        return None
    keys = [f"shapes[{CAPACITY_SHAPE}].y0", f"shapes[{CAPACITY_SHAPE}].y1"]
    values = [float(relayout[k]) for k in keys if k in relayout and relayout[k] is not None]
    if not values:
        shapes = relayout.get("shapes")
        if isinstance(shapes, list) and len(shapes) > CAPACITY_SHAPE:
            s = shapes[CAPACITY_SHAPE]
            values = [float(s[k]) for k in ("y0", "y1") if k in s]
    if not values:
        return None
    return max(values) if len(values) == 1 else sum(values) / len(values)
