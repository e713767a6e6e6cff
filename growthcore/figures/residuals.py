"""Panels 4 and 5: residuals against time and against fitted values, and observed against predicted.

Residuals are on the scale each fit minimised: p − p̂ for additive error and every increments fit,
ln p − ln p̂ for a trajectory fit with log error. When both scales are on screen they get an axis
each, stacked, so that no axis mixes two units.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.figures import theme
from growthcore.figures.common import (
    Figure,
    axis_title,
    base_layout,
    fit_styles,
    highlight_trace,
    message_figure,
    non_positive_note,
    points_marker,
    state_axis,
)
from growthcore.figures.margins import with_left_margin

_NONE = ("No converged fit to show. Choose at least one form in the Model section; when a fit failed, "
         "the comparison table (panel 6) says why.")
LOG_SCALE = "log"        # residual ln p − ln p̂
STATE_SCALE = "state"    # residual p − p̂


def _converged(fits: Sequence[Mapping[str, Any]]) -> list[tuple[int, Mapping[str, Any]]]:
    return [(k, f) for k, f in enumerate(fits) if f.get("status") == "converged" and f.get("t")]


def residual_scale(fit: Mapping[str, Any]) -> str:
    """The scale of a fit's residuals: 'log' for a trajectory fit with log error, else 'state'."""
    return LOG_SCALE if fit.get("error") == "log" and fit.get("method") == "trajectory" else STATE_SCALE


def residual_axis_title(scale: str, unit: str) -> str:
    if scale == LOG_SCALE:
        return "Residual ln p − ln p̂ [ln units]"
    return axis_title("Residual p − p̂", unit)


def short_residual_title(scale: str, unit: str) -> str:
    return "ln p − ln p̂" if scale == LOG_SCALE else (f"p − p̂ [{unit}]" if unit else "p − p̂")


def _points(style: Mapping[str, str], f: Mapping[str, Any], x: Sequence[float | None],
            y: Sequence[float | None], labels: Mapping[str, Any], hover: str) -> dict[str, Any]:
    rows = labels.get("rows")
    cd = [[int(i), int(rows[i]) if rows else int(i) + 1] for i in f["index"]]
    return {
        "type": "scatter", "mode": "markers", "x": list(x), "y": list(y), "name": f["label"],
        "customdata": cd, "meta": "points", "marker": points_marker(style),
        "hovertemplate": f"{f['label']}<br>{hover}<br>row %{{customdata[1]}}<extra></extra>",
    }


def _zero_line(yref: str = "y") -> dict[str, Any]:
    return {"type": "line", "xref": "paper", "x0": 0, "x1": 1, "yref": yref, "y0": 0, "y1": 0,
            "line": {"color": theme.REFERENCE, "width": 1.5}, "layer": "below"}


def _residual_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any], x_title: str,
                     x_of: str, x_hover: str, models: Sequence[str] | None) -> Figure:
    shown = _converged(fits)
    if not shown:
        return message_figure(_NONE)
    vu = labels.get("value_unit", "")
    scales = [s for s in (STATE_SCALE, LOG_SCALE) if any(residual_scale(f) == s for _, f in shown)]
    layout = base_layout(x_title, residual_axis_title(scales[0], vu), uirevision=labels.get("uirevision"))
    axis_of = {scales[0]: "y"}
    if len(scales) == 2:
        # two residual scales: p − p̂ above, ln p − ln p̂ below, one shared time (or fitted) axis
        axis_of[scales[1]] = "y2"
        layout["yaxis"].update(domain=[0.56, 1.0])
        # short titles: two long rotated titles on half-height axes would run into each other
        layout["yaxis2"] = {**layout["yaxis"], "domain": [0.0, 0.44], "anchor": "x",
                            "title": {"text": short_residual_title(scales[1], vu), "font": {"size": 12}}}
        layout["yaxis"]["title"] = {"text": short_residual_title(scales[0], vu), "font": {"size": 12}}
        layout["xaxis"]["anchor"] = "y2"
    layout["shapes"] = [_zero_line(axis_of[s]) for s in scales]
    styles = fit_styles(fits, models)
    data = []
    for k, f in shown:
        scale = residual_scale(f)
        what = "ln p − ln p̂" if scale == LOG_SCALE else "p − p̂"
        trace = _points(styles[k], f, f[x_of], f["residuals"], labels, f"{x_hover}<br>{what} = %{{y:.3g}}")
        if axis_of[scale] != "y":
            trace["yaxis"] = axis_of[scale]
        data.append(trace)
    highlights = [highlight_trace()]
    if len(scales) == 2:
        highlights.append(dict(highlight_trace(), yaxis="y2"))
    return with_left_margin({"data": [*data, *highlights], "layout": layout})


def residual_time_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any], *,
                         models: Sequence[str] | None = None) -> Figure:
    """Residuals in time order with the zero line; runs of one sign mean systematic misfit."""
    tu = labels.get("time_unit", "")
    return _residual_figure(fits, labels, axis_title("Time", tu), "t", f"t = %{{x:.4g}} {tu}", models)


def residual_fitted_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any], *,
                           models: Sequence[str] | None = None, scale: str | None = None) -> Figure:
    """Residuals against fitted values: a funnel means the error grows with the state."""
    vu = labels.get("value_unit", "")
    fig = _residual_figure(fits, labels, axis_title("Fitted p̂", vu), "predicted", f"p̂ = %{{x:.4g}} {vu}", models)
    if fig["data"]:
        state_axis(fig["layout"]["xaxis"], scale)
        values = [v for _, f in _converged(fits) for v in f["predicted"]]
        fig["layout"]["annotations"] = non_positive_note(values, scale)
    return fig


def observed_predicted_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any], *,
                              models: Sequence[str] | None = None, scale: str | None = None) -> Figure:
    """Observed against predicted (one step ahead for the increments method) with the 1:1 line."""
    shown = _converged(fits)
    if not shown:
        return message_figure(_NONE)
    vu = labels.get("value_unit", "")
    qty = labels["quantity"]
    layout = base_layout(axis_title(f"Predicted {qty.lower()}", vu), axis_title(f"Observed {qty.lower()}", vu),
                         uirevision=labels.get("uirevision"))
    state_axis(layout["xaxis"], scale)
    state_axis(layout["yaxis"], scale)
    values = [v for _, f in shown for v in (*f["observed"], *f["predicted"]) if v is not None]
    if scale == "log":
        values = [v for v in values if v > 0]
    lo, hi = (min(values), max(values)) if values else (0.0, 1.0)
    layout["shapes"] = [{"type": "line", "xref": "x", "yref": "y", "x0": lo, "x1": hi, "y0": lo, "y1": hi,
                         "line": {"color": theme.REFERENCE, "width": 1.5, "dash": "dot"}, "layer": "below"}]
    layout["annotations"] = [{"text": "1:1", "x": _axis_value(hi, scale), "y": _axis_value(hi, scale),
                              "xref": "x", "yref": "y", "showarrow": False, "xanchor": "right",
                              "yanchor": "bottom", "font": {"color": theme.MUTED, "size": 11}},
                             *non_positive_note([v for _, f in shown for v in (*f["observed"], *f["predicted"])],
                                                scale)]
    data = []
    styles = fit_styles(fits, models)
    for k, f in shown:
        ahead = " (one step ahead)" if f["method"] == "increments" else ""
        data.append(_points(styles[k], f, f["predicted"], f["observed"], labels,
                            f"predicted{ahead} = %{{x:.4g}} {vu}<br>observed = %{{y:.4g}} {vu}"))
    return with_left_margin({"data": [*data, highlight_trace()], "layout": layout})


def _axis_value(v: float, scale: str | None) -> float:
    """Annotations on a log axis are placed by log10 of the value (plotly's rule); shapes by the value."""
    import math

    return math.log10(v) if scale == "log" and v > 0 else v
