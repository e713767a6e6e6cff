"""Panels 1 and 2: the change per unit time against the state (or time), and against candidate terms."""

from __future__ import annotations

from typing import Any, Mapping, Sequence

from app import theme
from app.figures.common import Figure, axis_title, base_layout, highlight_trace, message_figure, observation_trace, rate_unit


def _row_of(labels: Mapping[str, Any], i: int) -> int:
    rows = labels.get("rows")
    return int(rows[i]) if rows else i + 1


def change_figure(change: Mapping[str, Any], labels: Mapping[str, Any], *, against: str = "state") -> Figure:
    """Δp per unit time at the start of each step, against the state p (or against time t).

    ``change`` holds lists ``index, t, p, rate, used`` (one entry per pair of observations one step
    apart, from :func:`growthcore.explore.change_table`) and ``message``.
    """
    if not change.get("index"):
        return message_figure("no pairs of observations one step apart: " + change.get("message", ""))
    qty, vu, tu = labels["quantity"], labels.get("value_unit", ""), labels.get("time_unit", "")
    y_title = axis_title("Change per unit time Δp/Δt", rate_unit(vu, tu))
    if against == "time":
        x, x_title, xh = change["t"], axis_title("Time at the start of the step", tu), f"t = %{{x:.4g}} {tu}"
    else:
        x, x_title, xh = change["p"], axis_title(f"{qty} at the start of the step", vu), f"p = %{{x:.4g}} {vu}"
    layout = base_layout(x_title, y_title, uirevision=labels.get("uirevision"))
    layout["shapes"] = [_zero_line()]
    layout["showlegend"] = False
    rows = [_row_of(labels, i) for i in change["index"]]
    hover = f"{xh}<br>Δp/Δt = %{{y:.4g}} {rate_unit(vu, tu)}<br>row %{{customdata[1]}}"
    trace = observation_trace(x, change["rate"], change["index"], rows, change["used"], name="change per step",
                              hover=hover)
    return {"data": [trace, highlight_trace()], "layout": layout}


def candidate_figure(candidates: Sequence[Mapping[str, Any]], labels: Mapping[str, Any]) -> Figure:
    """Δp per step against each candidate term g(p; K), with its fitted line through the origin.

    Each candidate holds ``label, status, message, index, g, dp, fitted, slope, r2_uncentered`` as
    computed by :func:`growthcore.explore.candidate_fit`, and optionally ``style``: the position of its
    form among the fits, so that a form has one colour in every panel.
    """
    shown = [c for c in candidates if c.get("status") == "converged" and c.get("g")]
    if not shown:
        reasons = "; ".join(f"{c['label']}: {c['message']}" for c in candidates) or "choose a form with a rate term"
        return message_figure(reasons)
    vu = labels.get("value_unit", "")
    h = labels.get("h")
    tu = labels.get("time_unit", "")
    step = f"per step of {h:g} {tu}".strip() if h else "per step"
    layout = base_layout(axis_title("Candidate term g(p; K)", vu),
                         axis_title(f"Δp {step}", vu), uirevision=labels.get("uirevision"))
    layout["shapes"] = [_zero_line()]
    data = []
    for k, c in enumerate(shown):
        colour, dash = theme.form_style(int(c.get("style", k)))
        rows = [_row_of(labels, i) for i in c["index"]]
        used = [True] * len(c["index"])
        trace = observation_trace(c["g"], c["dp"], c["index"], rows, used, name=f"g = {c['label']}",
                                  hover=f"g = %{{x:.4g}}<br>Δp = %{{y:.4g}} {vu}<br>row %{{customdata[1]}}")
        trace["marker"].update(color=colour, symbol="circle", line={"width": 0.6, "color": theme.INK}, size=6)
        trace["legendgroup"] = c["label"]
        trace["showlegend"] = False
        data.append(trace)
        pairs = sorted(zip(c["g"], c["fitted"]), key=lambda gv: gv[0])
        line_x = [0.0] + [g for g, _ in pairs]
        line_y = [0.0] + [v for _, v in pairs]
        data.append({
            "type": "scatter", "mode": "lines+markers", "x": line_x, "y": line_y, "legendgroup": c["label"],
            "name": f"g = {c['label']}: {c.get('slope_name', 'b')} = {c['slope']:.4g}, "
                    f"uncentered R² = {c['r2_uncentered']:.3f}",
            "marker": {"size": 0.1, "color": colour},
            "line": {"color": colour, "dash": dash, "width": 2}, "hoverinfo": "skip",
        })
    data.append(highlight_trace())
    return {"data": data, "layout": layout}


def _zero_line() -> dict[str, Any]:
    return {"type": "line", "xref": "paper", "x0": 0, "x1": 1, "yref": "y", "y0": 0, "y1": 0,
            "line": {"color": theme.REFERENCE, "width": 1}, "layer": "below"}
