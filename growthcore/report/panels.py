"""Panels of a fit record as plotly figure dicts: data and fitted paths, residuals, tables, profile.

Figures are plain dicts (plotly validates them when they are drawn); every number comes from the
record, and fitted paths are evaluated from the recorded constants without fitting again.
"""

from __future__ import annotations

import html
import math
from typing import Any, Mapping, Sequence

import numpy as np

from growthcore.fit.result import FitResult
from growthcore.reopen import fits_from_record

Figure = dict[str, Any]
#: Okabe–Ito colours (Okabe & Ito 2008), distinguishable under common colour-vision deficiencies.
COLOURS = ("#0072B2", "#E69F00", "#009E73", "#CC79A7", "#56B4E9", "#D55E00")
DASHES = ("solid", "dash", "dot", "dashdot", "longdash", "longdashdot")
INK, MUTED, GRID = "#1f2a30", "#6b7780", "#e3e7ea"
FONT = "Helvetica Neue, Arial, sans-serif"
#: Panel names in the order they are exported; the two residual views after ``residuals`` come from
#: the app's builders, ``profile`` exists only when a fit profiled K.
PANEL_NAMES = ("data", "residuals", "residuals-fitted", "observed-predicted", "comparison", "parameters", "profile")
TITLES = {
    "data": "Observations and fitted forms",
    "residuals": "Residuals against time",
    "residuals-fitted": "Residuals against fitted values",
    "observed-predicted": "Observed against predicted",
}


def esc(text: Any) -> str:
    """User text (column names, file names) is shown, never read as markup."""
    return html.escape(str(text), quote=True)


def label(f: Mapping[str, Any]) -> str:
    return f"{f['model']} ({f['method']}, {f['error']})"


def _axis(title: str) -> dict[str, Any]:
    return {"title": {"text": title}, "showline": True, "linecolor": MUTED, "ticks": "outside",
            "gridcolor": GRID, "zeroline": False, "automargin": True}


def _layout(title: str, x: str, y: str) -> dict[str, Any]:
    return {
        "title": {"text": title, "x": 0.0, "xanchor": "left"},
        "xaxis": _axis(x), "yaxis": _axis(y),
        "font": {"family": FONT, "color": INK, "size": 12},
        "paper_bgcolor": "#ffffff", "plot_bgcolor": "#ffffff",
        "margin": {"l": 60, "r": 20, "t": 60, "b": 50},
        "legend": {"orientation": "h", "yanchor": "bottom", "y": 1.0, "x": 0.0, "font": {"size": 11}},
        "hovermode": "closest",
    }


def _with_unit(name: str, unit: str) -> str:
    return f"{esc(name)} [{esc(unit)}]" if unit else esc(name)


def _clean(values: Sequence[float]) -> list[float | None]:
    return [float(v) if v is not None and math.isfinite(v) else None for v in values]


def data_figure(record: Mapping[str, Any], fits: Sequence[FitResult] | None = None) -> Figure:
    """Observations (used and left out, with the reason on hover) and each converged fitted path."""
    data = record["data"]
    fits = list(fits) if fits is not None else fits_from_record(record)
    pts = data["points"]
    used = [p for p in pts if p["used"]]
    left = [p for p in pts if not p["used"] and p["p"] is not None]
    traces: list[dict[str, Any]] = [{
        "type": "scatter", "mode": "markers", "name": "observed", "x": [p["t"] for p in used],
        "y": [p["p"] for p in used], "marker": {"color": INK, "size": 7},
    }]
    if left:
        traces.append({
            "type": "scatter", "mode": "markers", "name": "left out", "x": [p["t"] for p in left],
            "y": [p["p"] for p in left], "text": [esc(p["reason"]) for p in left],
            "hovertemplate": "t = %{x}<br>p = %{y}<br>%{text}<extra>left out</extra>",
            "marker": {"color": MUTED, "size": 8, "symbol": "x-thin", "line": {"width": 2, "color": MUTED}},
        })
    t_end = max(p["t"] for p in pts)
    for i, (f, d) in enumerate(zip(fits, record["fits"])):
        if not f.success or f.form is None:
            continue
        try:
            t, y = f.path(t_end)
        except (ValueError, ArithmeticError):
            continue
        shape = "hv" if f.form.kind == "difference" else "linear"
        if f.method == "increments":  # one-step-ahead predictions, not a path: show them as such
            t, y, mode = f.t, f.predicted, "markers"
        else:
            mode = "lines"
        traces.append({
            "type": "scatter", "mode": mode, "name": esc(label(d)), "x": _clean(np.asarray(t)),
            "y": _clean(np.asarray(y)), "line": {"color": COLOURS[i % 6], "dash": DASHES[i % 6], "shape": shape},
            "marker": {"color": COLOURS[i % 6], "symbol": "circle-open", "size": 8},
        })
    title = f"{esc(data.get('name', 'series'))}: observations and fitted forms"
    layout = _layout(title, _with_unit(data["time"]["column"], data["time"]["unit"]),
                     _with_unit(data["value"]["column"], data["value"]["unit"]))
    return {"data": traces, "layout": layout}


def residual_figure(record: Mapping[str, Any]) -> Figure:
    """Residuals on each fit's error scale against time, with the zero line."""
    data = record["data"]
    traces = []
    for i, f in enumerate(record["fits"]):
        if f["status"] != "converged" or not f.get("residuals"):
            continue
        res = f["residuals"]
        traces.append({
            "type": "scatter", "mode": "lines+markers", "name": esc(label(f)), "x": [r["t"] for r in res],
            "y": [r["residual"] for r in res], "line": {"color": COLOURS[i % 6], "dash": DASHES[i % 6], "width": 1},
            "marker": {"color": COLOURS[i % 6], "size": 6},
        })
    layout = _layout("Residuals (observed − predicted, on each fit's error scale)",
                     _with_unit(data["time"]["column"], data["time"]["unit"]), "residual")
    layout["shapes"] = [{"type": "line", "xref": "paper", "x0": 0, "x1": 1, "y0": 0, "y1": 0,
                         "line": {"color": MUTED, "width": 1}}]
    return {"data": traces, "layout": layout}


def _fmt(v: Any, spec: str = ".4g") -> str:
    if v is None:
        return "–"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, float)):
        return format(v, spec) if math.isfinite(v) else "–"
    return esc(v)


def comparison_columns(record: Mapping[str, Any]) -> tuple[list[str], list[list[str]]]:
    """Header and columns of the comparison table (rows as the record orders them)."""
    rows = record.get("comparison", {}).get("rows") or [
        {"model": f["model"], "method": f["method"], "error": f["error"], "status": f["status"],
         **{k: (f.get("metrics") or {}).get(k) for k in ("n", "n_params", "r2", "r2_uncentered", "rmse", "aicc", "bic")}}
        for f in record["fits"]]
    header = ["form (method, error)", "n", "k", "R² (states)", "uncentered R² (Δp)", "RMSE", "AICc", "ΔAICc", "weight",
              "misfit"]
    cols = [
        [esc(label(r)) + (" ★" if r.get("best") else "") + ("" if r["status"] == "converged" else " – failed")
         for r in rows],
        [_fmt(r.get("n")) for r in rows], [_fmt(r.get("n_params")) for r in rows],
        [_fmt(r.get("r2"), ".4f") for r in rows], [_fmt(r.get("r2_uncentered"), ".4f") for r in rows],
        [_fmt(r.get("rmse")) for r in rows],
        [_fmt(r.get("aicc"), ".2f") for r in rows], [_fmt(r.get("delta_aicc"), ".2f") for r in rows],
        [_fmt(r.get("weight"), ".3f") for r in rows],
        ["systematic" if r.get("systematic_misfit") else "–" if r.get("systematic_misfit") is None else "none"
         for r in rows],
    ]
    return header, cols


COMPARISON_WIDTHS = [3.2, 0.6, 0.5, 0.9, 1.1, 0.9, 1.0, 0.9, 0.9, 1.1]


def key_constant_columns(record: Mapping[str, Any]) -> tuple[list[str], list[list[str]]]:
    """One row per converged fit: each constant with its 95% interval (compact, for the sheet)."""
    forms, consts = [], []
    for f in record["fits"]:
        if f["status"] != "converged":
            continue
        parts = []
        for name, p in f.get("parameters", {}).items():
            ci = p.get("ci95")
            extra = " fixed" if p.get("fixed") else f" ({_fmt(ci[0])} to {_fmt(ci[1])})" if ci else " (no interval)"
            parts.append(f"{esc(name)} = {_fmt(p.get('value'), '.5g')}{extra}")
        forms.append(esc(label(f)))
        consts.append("; ".join(parts))
    return ["form (method, error)", "constants (95% interval)"], [forms, consts]


def parameter_columns(record: Mapping[str, Any]) -> tuple[list[str], list[list[str]]]:
    header = ["form", "constant", "value", "SE", "95% interval", "note"]
    out: list[list[str]] = [[] for _ in header]
    for f in record["fits"]:
        for name, p in f.get("parameters", {}).items():
            ci = p.get("ci95")
            interval = f"{_fmt(ci[0])} to {_fmt(ci[1])}" if ci else "–"
            note = "fixed" if p.get("fixed") else "at its bound" if p.get("at_bound") else ""
            for col, v in zip(out, (esc(label(f)), esc(name), _fmt(p.get("value"), ".6g"), _fmt(p.get("se"), ".3g"),
                                    interval, note)):
                col.append(v)
    return header, out


def _table(header: list[str], cols: list[list[str]], title: str, widths: Sequence[float] | None = None) -> Figure:
    return {
        "data": [{
            "type": "table", "columnwidth": list(widths) if widths else None,
            "header": {"values": [f"<b>{h}</b>" for h in header], "fill": {"color": GRID}, "align": "left",
                       "font": {"family": FONT, "size": 12, "color": INK}},
            "cells": {"values": cols, "align": "left", "font": {"family": FONT, "size": 11, "color": INK},
                      "height": 22},
        }],
        "layout": {"title": {"text": title, "x": 0.0, "xanchor": "left"}, "font": {"family": FONT, "color": INK},
                   "margin": {"l": 20, "r": 20, "t": 50, "b": 20}, "paper_bgcolor": "#ffffff"},
    }


def comparison_figure(record: Mapping[str, Any]) -> Figure:
    """The side-by-side table; ★ marks the best form by AICc among comparable fits."""
    return _table(*comparison_columns(record), "Comparison of fitted forms (★ best by AICc within comparable fits)",
                  COMPARISON_WIDTHS)


def parameter_figure(record: Mapping[str, Any]) -> Figure:
    """Each constant with its standard error and t-based 95% interval."""
    return _table(*parameter_columns(record), "Constants with standard errors and 95% intervals",
                  [2.6, 0.8, 1.0, 0.8, 1.6, 0.9])


def profile_figure(record: Mapping[str, Any]) -> Figure | None:
    """SSE against a fixed K for each fit that profiled K, with its threshold; None when none did."""
    traces = []
    for i, f in enumerate(record["fits"]):
        prof = f.get("capacity_profile")
        if not prof:
            continue
        colour = COLOURS[i % 6]
        traces.append({"type": "scatter", "mode": "lines", "name": esc(label(f)), "x": prof["K"], "y": prof["sse"],
                       "line": {"color": colour, "dash": DASHES[i % 6]}})
        if prof.get("threshold") is not None:
            traces.append({"type": "scatter", "mode": "lines", "showlegend": False, "hoverinfo": "skip",
                           "x": [min(prof["K"]), max(prof["K"])], "y": [prof["threshold"]] * 2,
                           "line": {"color": colour, "width": 1, "dash": "dot"}})
        if prof.get("threshold_lr") is not None:
            traces.append({"type": "scatter", "mode": "lines", "showlegend": False, "hoverinfo": "skip",
                           "x": [min(prof["K"]), max(prof["K"])], "y": [prof["threshold_lr"]] * 2,
                           "line": {"color": colour, "width": 1, "dash": "dash"}})
    if not traces:
        return None
    return {"data": traces, "layout": _layout("Profile of K: SSE with K fixed (dotted: F-calibrated 95% cut; dashed: chi-square likelihood-ratio cut)",
                                              "carrying capacity K", "SSE")}


def app_panels(record: Mapping[str, Any], fits: Sequence[FitResult]) -> dict[str, Figure] | None:
    """The dashboard's own plot panels for the record, so that exported figures match the app.

    None when the app's figure builders are not importable (an engine-only install).
    """
    try:
        from app.figures.residuals import observed_predicted_figure, residual_fitted_figure, residual_time_figure
        from app.figures.trajectory import trajectory_figure
        from app.state import fit_to_store, quantity_name
    except ImportError:
        return None
    from growthcore.reopen import series_from_record

    series = series_from_record(record)
    data = record["data"]
    rows = [int(p["row"]) for p in data["points"]] if all("row" in p for p in data["points"]) else None
    plain = {"t": [p["t"] for p in data["points"]], "p": [p["p"] for p in data["points"]], "rows": rows}
    labels = {"quantity": quantity_name(data["value"]["column"], data["value"]["unit"]),
              "value_unit": data["value"]["unit"], "time_unit": data["time"]["unit"], "rows": rows,
              "uirevision": None, "h": None}
    stored = [fit_to_store(f, series) for f in fits]
    capacity = (record.get("settings") or {}).get("capacity")
    figures = {
        "data": trajectory_figure(plain, [bool(u) for u in series.used], stored, capacity, labels, editable=False),
        "residuals": residual_time_figure(stored, labels),
        "residuals-fitted": residual_fitted_figure(stored, labels),
        "observed-predicted": observed_predicted_figure(stored, labels),
    }
    for name, fig in figures.items():
        _for_export(fig, TITLES[name])
    return figures


def _for_export(fig: Figure, title: str) -> None:
    """Drop what only makes sense under a pointer (the hover highlight, the K handle); add the key."""
    from app.figures.common import EXPORT_LEGEND

    fig["data"] = [t for t in fig["data"] if t.get("meta") != "highlight"]
    layout = fig["layout"]
    # A family name with a digit must be quoted in CSS, or the browser drops the whole list
    family = (layout.get("font") or {}).get("family")
    if family:
        layout["font"]["family"] = ", ".join(
            f'"{n.strip()}"' if " " in n.strip() and not n.strip().startswith('"') else n.strip() for n in family.split(","))
    layout["title"] = {"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 14}}
    layout["margin"] = dict(layout.get("margin") or {}, t=60)
    # a figure on its own needs its key: beside the plot area, never over the plot or the title
    layout["showlegend"] = bool(fig["data"])
    layout["legend"] = dict(EXPORT_LEGEND)
    layout["shapes"] = [s for s in layout.get("shapes") or [] if not s.get("editable")]


def panel_figures(record: Mapping[str, Any]) -> dict[str, Figure]:
    """Every panel of the record by name (see ``PANEL_NAMES``)."""
    fits = fits_from_record(record)
    out = app_panels(record, fits) or {"data": data_figure(record, fits), "residuals": residual_figure(record)}
    out.update({
        "comparison": comparison_figure(record),
        "parameters": parameter_figure(record),
    })
    prof = profile_figure(record)
    if prof is not None:
        out["profile"] = prof
    return out


def _moved(traces: list[dict[str, Any]], axis: str, *, legend: bool = True) -> list[dict[str, Any]]:
    n = axis[1:] if len(axis) > 1 else ""
    return [dict(t, xaxis=f"x{n}", yaxis=f"y{n}", showlegend=legend and t.get("showlegend", True)) for t in traces]


def sheet_heading(record: Mapping[str, Any]) -> str:
    data = record["data"]
    sha = data.get("sha256") or ""
    src = f"{esc(data.get('source') or 'data entered directly')}" + (f" (SHA-256 {sha[:12]}…)" if sha else "")
    sw = record.get("software", {})
    return (f"<b>{esc(data.get('name', 'series'))}</b>: fit summary<br>"
            f"<span style='font-size:11px'>source {src}; {sum(p['used'] for p in data['points'])} of "
            f"{len(data['points'])} points used; written {esc(record.get('created', ''))} by "
            f"{esc(sw.get('name', 'growthcore'))} {esc(sw.get('version', ''))}</span>")


def summary_sheet(record: Mapping[str, Any], *, landscape: bool = False) -> Figure:
    """One page: data with fitted forms, residuals, the comparison table and the constants.

    Portrait stacks the four parts; landscape puts the plots on the left and the tables on the right.
    """
    fits = fits_from_record(record)
    app_figs = app_panels(record, fits)
    data_fig = app_figs["data"] if app_figs else data_figure(record, fits)
    res_fig = app_figs["residuals"] if app_figs else residual_figure(record)
    comp = comparison_figure(record)["data"][0]
    pars = _table(*key_constant_columns(record), "", [1.3, 3.0])["data"][0]
    if landscape:
        d_dom, r_dom = ([0.0, 0.55], [0.42, 0.9]), ([0.0, 0.55], [0.0, 0.3])
        c_dom, p_dom = ([0.6, 1.0], [0.5, 0.9]), ([0.6, 1.0], [0.0, 0.45])
    else:
        # Gaps leave room for each plot's axis title above the next part's heading.
        d_dom, r_dom = ([0.0, 1.0], [0.67, 0.97]), ([0.0, 1.0], [0.44, 0.6])
        c_dom, p_dom = ([0.0, 1.0], [0.24, 0.37]), ([0.0, 1.0], [0.0, 0.2])
    layout = _layout(sheet_heading(record), "", "")
    layout["title"].update(y=0.985, yanchor="top", yref="container", x=0.015, xref="container", font={"size": 15},
                           pad={"t": 4})
    layout["margin"] = {"l": 60, "r": 30, "t": 90, "b": 30}
    for fig in (data_fig, res_fig):
        fig["layout"].pop("title", None)
    layout["xaxis"] = dict(data_fig["layout"]["xaxis"], domain=d_dom[0], anchor="y")
    layout["yaxis"] = dict(data_fig["layout"]["yaxis"], domain=d_dom[1], anchor="x")
    layout["xaxis2"] = dict(res_fig["layout"]["xaxis"], domain=r_dom[0], anchor="y2")
    layout["yaxis2"] = dict(res_fig["layout"]["yaxis"], domain=r_dom[1], anchor="x2")
    layout["legend"] = {"x": d_dom[0][1], "xanchor": "right", "y": d_dom[1][0] + 0.01, "yanchor": "bottom",
                        "font": {"size": 10}, "bgcolor": "rgba(255,255,255,0.8)", "bordercolor": GRID, "borderwidth": 1}
    layout["shapes"] = [
        *(dict(s, xref="x domain", yref="y") for s in data_fig["layout"].get("shapes") or []),
        *(dict(s, xref="x2 domain", yref="y2", x0=0, x1=1) for s in res_fig["layout"].get("shapes") or []),
    ]
    layout["annotations"] = [
        {"text": f"<b>{t}</b>", "xref": "paper", "yref": "paper", "x": dom[0][0], "y": dom[1][1] + 0.003,
         "xanchor": "left", "yanchor": "bottom", "showarrow": False, "font": {"size": 12}}
        for t, dom in (("Residuals", r_dom), ("Comparison of fitted forms (★ best by AICc)", c_dom),
                       ("Constants with 95% intervals", p_dom), ("Observations and fitted forms", d_dom))
    ]
    tables = [dict(comp, domain={"x": c_dom[0], "y": c_dom[1]}), dict(pars, domain={"x": p_dom[0], "y": p_dom[1]})]
    traces = _moved(data_fig["data"], "x") + _moved(res_fig["data"], "x2", legend=False) + tables
    return {"data": traces, "layout": layout}
