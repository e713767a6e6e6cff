"""Panels 4 and 5: residuals against time and against fitted values, and observed against predicted."""

from __future__ import annotations

from typing import Any, Mapping, Sequence

from app import theme
from app.figures.common import Figure, axis_title, base_layout, fit_styles, highlight_trace, message_figure

_NONE = "no converged fit to show: pick a form, or see the comparison table for why a fit failed"


def _converged(fits: Sequence[Mapping[str, Any]]) -> list[tuple[int, Mapping[str, Any]]]:
    return [(k, f) for k, f in enumerate(fits) if f.get("status") == "converged" and f.get("t")]


def _residual_title(fits: Sequence[Mapping[str, Any]], unit: str) -> str:
    logs = {f["error"] == "log" and f["method"] == "trajectory" for _, f in _converged(fits)}
    if logs == {True}:
        return "Residual ln p − ln p̂ [ln units]"
    if True in logs:
        return "Residual (p − p̂; ln p − ln p̂ for log error)"
    return axis_title("Residual p − p̂", unit)


def _points(style: Mapping[str, str], f: Mapping[str, Any], x: Sequence[float | None],
            y: Sequence[float | None], labels: Mapping[str, Any], hover: str) -> dict[str, Any]:
    rows = labels.get("rows")
    cd = [[int(i), int(rows[i]) if rows else int(i) + 1] for i in f["index"]]
    return {
        "type": "scatter", "mode": "markers", "x": list(x), "y": list(y), "name": f["label"],
        "customdata": cd, "meta": "points",
        "marker": {"size": 6, "color": style["colour"], "symbol": style["symbol"],
                   "line": {"width": 0.5 if not style["symbol"].endswith("-open") else 1.5,
                            "color": theme.INK if not style["symbol"].endswith("-open") else style["colour"]}},
        "hovertemplate": f"{f['label']}<br>{hover}<br>row %{{customdata[1]}}<extra></extra>",
    }


def _zero_line() -> dict[str, Any]:
    return {"type": "line", "xref": "paper", "x0": 0, "x1": 1, "yref": "y", "y0": 0, "y1": 0,
            "line": {"color": theme.REFERENCE, "width": 1.5}, "layer": "below"}


def residual_time_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any]) -> Figure:
    """Residuals in time order with the zero line; runs of one sign mean systematic misfit."""
    shown = _converged(fits)
    if not shown:
        return message_figure(_NONE)
    tu, vu = labels.get("time_unit", ""), labels.get("value_unit", "")
    layout = base_layout(axis_title("Time", tu), _residual_title(fits, vu), uirevision=labels.get("uirevision"))
    layout["shapes"] = [_zero_line()]
    styles = fit_styles(fits)
    data = [_points(styles[k], f, f["t"], f["residuals"], labels, f"t = %{{x:.4g}} {tu}<br>residual = %{{y:.3g}}")
            for k, f in shown]
    return {"data": [*data, highlight_trace()], "layout": layout}


def residual_fitted_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any]) -> Figure:
    """Residuals against fitted values: a funnel means the error grows with the state."""
    shown = _converged(fits)
    if not shown:
        return message_figure(_NONE)
    vu = labels.get("value_unit", "")
    layout = base_layout(axis_title("Fitted p̂", vu), _residual_title(fits, vu), uirevision=labels.get("uirevision"))
    layout["shapes"] = [_zero_line()]
    styles = fit_styles(fits)
    data = [_points(styles[k], f, f["predicted"], f["residuals"], labels, f"p̂ = %{{x:.4g}} {vu}<br>residual = %{{y:.3g}}")
            for k, f in shown]
    return {"data": [*data, highlight_trace()], "layout": layout}


def observed_predicted_figure(fits: Sequence[Mapping[str, Any]], labels: Mapping[str, Any]) -> Figure:
    """Observed against predicted (one step ahead for the increments method) with the 1:1 line."""
    shown = _converged(fits)
    if not shown:
        return message_figure(_NONE)
    vu = labels.get("value_unit", "")
    qty = labels["quantity"]
    layout = base_layout(axis_title(f"Predicted {qty.lower()}", vu), axis_title(f"Observed {qty.lower()}", vu),
                         uirevision=labels.get("uirevision"))
    values = [v for _, f in shown for v in (*f["observed"], *f["predicted"]) if v is not None]
    lo, hi = (min(values), max(values)) if values else (0.0, 1.0)
    layout["shapes"] = [{"type": "line", "xref": "x", "yref": "y", "x0": lo, "x1": hi, "y0": lo, "y1": hi,
                         "line": {"color": theme.REFERENCE, "width": 1.5, "dash": "dot"}, "layer": "below"}]
    layout["annotations"] = [{"text": "1:1", "x": hi, "y": hi, "xref": "x", "yref": "y", "showarrow": False,
                              "xanchor": "right", "yanchor": "bottom", "font": {"color": theme.MUTED, "size": 11}}]
    data = []
    styles = fit_styles(fits)
    for k, f in shown:
        ahead = " (one step ahead)" if f["method"] == "increments" else ""
        data.append(_points(styles[k], f, f["predicted"], f["observed"], labels,
                            f"predicted{ahead} = %{{x:.4g}} {vu}<br>observed = %{{y:.4g}} {vu}"))
    return {"data": [*data, highlight_trace()], "layout": layout}
