"""Panels 1 and 2: the change per unit time against the state (or time), and against candidate terms."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.figures import theme
from growthcore.figures.common import (
    Figure,
    axis_title,
    base_layout,
    form_style,
    highlight_trace,
    message_figure,
    non_positive_note,
    observation_trace,
    points_marker,
    preview_uid,
    rate_unit,
    state_axis,
)
from growthcore.figures.margins import with_left_margin

#: What panel 2 says when no chosen form has a single rate term to regress on.
NO_CANDIDATE = ("This panel regresses the change per step on one rate term, and no chosen form has one{why}. "
                "To use it, choose a difference form with a rate term (geometric, discrete logistic, discrete "
                "Gompertz, theta-logistic, Allee) or write your own custom rate terms.")


def _row_of(labels: Mapping[str, Any], i: int) -> int:
    rows = labels.get("rows")
    return int(rows[i]) if rows else i + 1


def change_figure(change: Mapping[str, Any], labels: Mapping[str, Any], *, against: str = "state",
                  scale: str | None = None) -> Figure:
    """Δp per unit time at the start of each step, against the state p (or against time t).

    ``change`` holds lists ``index, t, p, rate, used`` (one entry per pair of observations one step
    apart, from :func:`growthcore.explore.change_table`) and ``message``. ``scale`` 'log' puts the
    state axis on a log scale.
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
    if against != "time":
        state_axis(layout["xaxis"], scale)
        layout["annotations"] = non_positive_note(change["p"], scale)
    rows = [_row_of(labels, i) for i in change["index"]]
    hover = f"{xh}<br>Δp/Δt = %{{y:.4g}} {rate_unit(vu, tu)}<br>row %{{customdata[1]}}"
    trace = observation_trace(x, change["rate"], change["index"], rows, change["used"], name="change per step",
                              hover=hover)
    return with_left_margin({"data": [trace, highlight_trace()], "layout": layout})


def candidate_figure(candidates: Sequence[Mapping[str, Any]], labels: Mapping[str, Any], *, both: bool = False,
                     notes: Sequence[str] = ()) -> Figure:
    """Δp per step against each candidate term g(p; K), with its fitted line through the origin.

    Each candidate holds ``label, status, message, index, g, dp, fitted, slope, r2_uncentered`` as
    computed by :func:`growthcore.explore.candidate_fit`, and optionally ``style``: the position of its
    form among the chosen forms, so that a form has one colour and marker in every panel (``both``:
    both methods are shown, and this panel is the increments method's). ``notes`` say why forms have
    no candidate; the blank panel repeats them and says what to do.
    """
    shown = [c for c in candidates if c.get("status") == "converged" and c.get("g")]
    if not shown:
        if candidates:
            return message_figure("No candidate term could be fitted: " + "; ".join(
                f"g = {c['label']}: {c['message']}" for c in candidates) + ".")
        curves = [n.split(":", 1)[0] for n in notes if "closed-form curve" in n]
        other = [n.split(":", 1)[0] for n in notes if "closed-form curve" not in n]
        why = ""
        if curves:
            why = f" (closed-form curves such as {', '.join(curves[:2])} have no change per step"
            why += f"; {', '.join(other[:2])} {'is' if len(other) == 1 else 'are'} not a multiple of one term)" \
                if other else ")"
        elif other:
            why = f" ({', '.join(other[:3])} {'is' if len(other) == 1 else 'are'} not a multiple of one term)"
        return message_figure(NO_CANDIDATE.format(why=why))
    vu = labels.get("value_unit", "")
    h = labels.get("h")
    tu = labels.get("time_unit", "")
    step = f"per step of {h:g} {tu}".strip() if h else "per step"
    layout = base_layout(axis_title("Candidate term g(p; K)", vu),
                         axis_title(f"Δp {step}", vu), uirevision=labels.get("uirevision"))
    layout["shapes"] = [_zero_line()]
    data = []
    for k, c in enumerate(shown):
        style = form_style(int(c.get("style", k)), "increments", both)
        colour, dash = style["colour"], style["dash"]
        rows = [_row_of(labels, i) for i in c["index"]]
        used = [True] * len(c["index"])
        trace = observation_trace(c["g"], c["dp"], c["index"], rows, used, name=f"g = {c['label']}",
                                  hover=f"g = %{{x:.4g}}<br>Δp = %{{y:.4g}} {vu}<br>row %{{customdata[1]}}")
        trace["marker"] = points_marker(style)
        trace["legendgroup"] = c["label"]
        trace["showlegend"] = False
        trace["uid"] = preview_uid("candidate-points", c["label"])
        data.append(trace)
        pairs = sorted(zip(c["g"], c["fitted"], strict=True), key=lambda gv: gv[0])
        line_x = [0.0] + [g for g, _ in pairs]
        line_y = [0.0] + [v for _, v in pairs]
        data.append({
            "type": "scatter", "mode": "lines", "x": line_x, "y": line_y, "legendgroup": c["label"],
            "uid": preview_uid("candidate-line", c["label"]),
            "name": f"g = {c['label']}: {c.get('slope_name', 'b')} = {c['slope']:.4g}, "
                    f"uncentered R² = {c['r2_uncentered']:.3f}",
            "line": {"color": colour, "dash": dash, "width": 2}, "hoverinfo": "skip",
        })
    data.append(highlight_trace())
    return with_left_margin({"data": data, "layout": layout})


def _zero_line() -> dict[str, Any]:
    return {"type": "line", "xref": "paper", "x0": 0, "x1": 1, "yref": "y", "y0": 0, "y1": 0,
            "line": {"color": theme.REFERENCE, "width": 1}, "layer": "below"}
