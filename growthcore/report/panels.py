"""Panels of a fit record as plotly figure dicts: data and fitted paths, residuals, tables, profile.

Figures are plain dicts (plotly validates them when they are drawn); every number comes from the
record, and fitted paths are evaluated from the recorded constants without fitting again.
"""

from __future__ import annotations

import html
import math
import re
from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.figures.common import EXPORT_LEGEND, Figure, fit_styles, wrap
from growthcore.figures.fits import fit_figure_dicts
from growthcore.figures.plain import fit_label
from growthcore.figures.theme import GRID, INK, MUTED
from growthcore.fit.result import FitResult
from growthcore.reopen import fits_from_record, series_from_record

#: The type of the report's own tables and pages (as on the HTML page); the row heights of a table
#: are estimated from these faces' widths (see :func:`_row_heights`).
FONT = "Helvetica Neue, Arial, sans-serif"
#: Panel names in the order they are exported; the plots are the dashboard's own figures,
#: ``profile`` exists only when a fit profiled K.
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
    """A form's row name in the report's tables, under the header 'form (method, error)'."""
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
         **{k: (f.get("metrics") or {}).get(k)
            for k in ("n", "n_params", "r2", "r2_uncentered", "rmse", "aicc", "bic")}}
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


COMPARISON_WIDTHS = [2.9, 0.5, 0.5, 0.9, 1.4, 0.9, 1.0, 0.9, 0.9, 1.1]


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
                                    interval, note), strict=True):
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


COMPARISON_TITLE = "Comparison of fitted forms (★ best by AICc within comparable fits)"
PARAMETER_TITLE = "Constants with standard errors and 95% intervals"
PARAMETER_WIDTHS = [2.6, 0.8, 1.0, 0.8, 1.6, 0.9]


def comparison_figure(record: Mapping[str, Any]) -> Figure:
    """The side-by-side table; ★ marks the best form by AICc among comparable fits."""
    return _table(*comparison_columns(record), COMPARISON_TITLE, COMPARISON_WIDTHS)


def parameter_figure(record: Mapping[str, Any]) -> Figure:
    """Each constant with its standard error and t-based 95% interval."""
    return _table(*parameter_columns(record), PARAMETER_TITLE, PARAMETER_WIDTHS)


def table_pages(name: str, header: list[str], cols: list[list[str]], widths: Sequence[float], title: str,
                size: tuple[int, int]) -> dict[str, Figure]:
    """A table as one or more figures of ``size``, each with as many whole rows as it holds."""
    w, h = size
    head_px, rows_px = _row_heights(header, cols, widths, w - 40)
    room = h - 70 - head_px  # the margins of _table
    spans, start = [], 0
    while start < len(rows_px):
        n = max(_fitting(rows_px[start:], room), 1)
        spans.append((start, start + n))
        start += n
    spans = spans or [(0, 0)]
    out = {}
    for k, (a, b) in enumerate(spans):
        label = f"{title} (page {k + 1} of {len(spans)})" if len(spans) > 1 else title
        out[name if k == 0 else f"{name}-{k + 1}"] = _table(header, [c[a:b] for c in cols], label, widths)
    return out


def profile_figure(record: Mapping[str, Any], view: Mapping[str, Any] | None = None) -> Figure | None:
    """SSE against a fixed K for each fit that profiled K, with its threshold; None when none did."""
    traces = []
    # each form in its colour, dash and label as in every other panel
    styles = [(st["colour"], st["dash"]) for st in fit_styles(record["fits"], _models(record, view))]
    for i, f in enumerate(record["fits"]):
        prof = f.get("capacity_profile")
        if not prof:
            continue
        colour, dash = styles[i]
        traces.append({"type": "scatter", "mode": "lines", "name": esc(fit_label(f)), "x": prof["K"], "y": prof["sse"],
                       "line": {"color": colour, "dash": dash}})
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
    title = ("Profile of K: SSE with K fixed "
             "(dotted: F-calibrated 95% cut; dashed: chi-square likelihood-ratio cut)")
    return {"data": traces, "layout": _layout(title, "carrying capacity K", "SSE")}


def _models(record: Mapping[str, Any], view: Mapping[str, Any] | None) -> list[str] | None:
    """The order that gives each form its colour: the screen's chosen forms when known, else the record's."""
    return list((view or {}).get("models") or (record.get("settings") or {}).get("models") or []) or None


def app_panels(record: Mapping[str, Any], fits: Sequence[FitResult],
               view: Mapping[str, Any] | None = None) -> dict[str, Figure]:
    """The dashboard's own plot panels for the record, so that exported figures match the app.

    ``view`` holds the screen's choices: ``scale`` ('log' or 'linear' state axes), ``path_from``
    (how increments fits' maps are drawn) and ``models`` (the chosen forms, whose order fixes each
    form's colour and marker).
    """
    view = view or {}
    panels = fit_figure_dicts(series_from_record(record), fits, capacity=(record.get("settings") or {}).get("capacity"),
                              scale=view.get("scale"), path_from=view.get("path_from", "none"),
                              models=_models(record, view))
    figures = {"data" if name == "trajectory" else name: fig for name, fig in panels.items()}
    for name, fig in figures.items():
        title = TITLES[name]
        if name == "data" and view.get("path_from") in ("first", "last") and any(
                f.method == "increments" and f.success for f in fits):
            title += ("<br><span style='font-size:11px'>increments fits: markers one step ahead; lines their map "
                      f"iterated from the {view['path_from']} observation</span>")
        export_view(fig, title)
    return figures


#: Characters per line of a legend entry in an exported figure (longer names wrap).
LEGEND_CHARS = 44


def export_view(fig: Figure, title: str) -> Figure:
    """An app figure made fit for a file, in place: no hover ring or K handle, a title, and the key
    beside the plot area (never over the plot or the title), with long names wrapped."""
    fig["data"] = [t for t in fig["data"] if t.get("meta") != "highlight"]
    for t in fig["data"]:
        if t.get("name"):
            t["name"] = wrap(str(t["name"]), LEGEND_CHARS)
    layout = fig["layout"]
    # A family name with a digit must be quoted in CSS, or the browser drops the whole list
    family = (layout.get("font") or {}).get("family")
    if family:
        layout["font"]["family"] = ", ".join(
            f'"{n.strip()}"' if " " in n.strip() and not n.strip().startswith('"') else n.strip()
            for n in family.split(","))
    layout["title"] = {"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 14}}
    layout["margin"] = dict(layout.get("margin") or {}, t=60)
    layout["showlegend"] = any(t.get("showlegend", True) for t in fig["data"])
    layout["legend"] = dict(EXPORT_LEGEND)
    layout["shapes"] = [s for s in layout.get("shapes") or [] if not s.get("editable")]
    return fig


def panel_figures(record: Mapping[str, Any], *, view: Mapping[str, Any] | None = None,
                  size: tuple[int, int] | None = None) -> dict[str, Figure]:
    """Every panel of the record by name (see ``PANEL_NAMES``), drawn as ``view`` says (see :func:`app_panels`).

    With ``size`` (width, height in CSS pixels, as the PNG is drawn) a table too long for one image
    is split into pages: 'parameters', 'parameters-2', ... each with its header, so no row is cut.
    """
    fits = fits_from_record(record)
    out = app_panels(record, fits, view)
    if size is None:
        out.update({"comparison": comparison_figure(record), "parameters": parameter_figure(record)})
    else:
        out.update(table_pages("comparison", *comparison_columns(record), COMPARISON_WIDTHS, COMPARISON_TITLE, size))
        out.update(table_pages("parameters", *parameter_columns(record), PARAMETER_WIDTHS, PARAMETER_TITLE, size))
    prof = profile_figure(record, view)
    if prof is not None:
        out["profile"] = prof
    return out


def _moved(traces: list[dict[str, Any]], axis: str, *, legend: bool = True) -> list[dict[str, Any]]:
    n = axis[1:] if len(axis) > 1 else ""
    return [dict(t, xaxis=f"x{n}", yaxis=f"y{n}", showlegend=legend and t.get("showlegend", True)) for t in traces]


def sheet_heading(record: Mapping[str, Any], *, page: tuple[int, int] | None = None) -> str:
    data = record["data"]
    sha = data.get("sha256") or ""
    src = f"{esc(data.get('source') or 'data entered directly')}" + (f" (SHA-256 {sha[:12]}…)" if sha else "")
    sw = record.get("software", {})
    of = f" (page {page[0]} of {page[1]})" if page else ""
    return (f"<b>{esc(data.get('name', 'series'))}</b>: fit summary{of}<br>"
            f"<span style='font-size:11px'>source {src}; {sum(p['used'] for p in data['points'])} of "
            f"{len(data['points'])} points used; written {esc(record.get('created', ''))} by "
            f"{esc(sw.get('name', 'growthcore'))} {esc(sw.get('version', ''))}</span>")


#: Default page sizes in CSS pixels (the screen presets of growthcore.report.images).
PORTRAIT, LANDSCAPE = (1200, 1550), (1280, 720)
_PAGE_MARGIN = {"l": 60, "r": 30, "t": 90, "b": 30}
_HEADING_PX = 24   # a table's heading line above it
_CELL_FONT, _HEAD_FONT = 11, 12


def _plain_text(text: str) -> str:
    return re.sub(r"<[^>]+>", "", text.replace("<br>", "\n"))


def _row_heights(header: Sequence[str], cols: Sequence[Sequence[str]], widths: Sequence[float],
                 width_px: float) -> tuple[float, list[float]]:
    """Header and row heights in pixels of a plotly table ``width_px`` wide, wrapping included.

    Conservative: a character is taken as 0.56 of the font size wide (Helvetica and Arial average
    about 0.5, from memory of their metrics), so a table given these heights is never cut.
    """
    total = sum(widths)
    col_px = [width_px * w / total for w in widths]

    def lines(text: str, px: float, font: int) -> int:
        per_line = max(int((px - 12) / (0.56 * font)), 1)
        return sum(max(math.ceil(len(part) / per_line), 1) for part in _plain_text(text).split("\n"))

    head = max(lines(h, px, _HEAD_FONT) for h, px in zip(header, col_px, strict=True)) * 16 + 10
    n_rows = len(cols[0]) if cols else 0
    rows = [max(22.0, max(lines(str(c[i]), px, _CELL_FONT) for c, px in zip(cols, col_px, strict=True)) * 15 + 8)
            for i in range(n_rows)]
    return float(head), rows


def _fitting(rows: Sequence[float], room: float) -> int:
    """How many of ``rows`` fit in ``room`` pixels."""
    used, n = 0.0, 0
    for h in rows:
        if used + h > room:
            break
        used, n = used + h, n + 1
    return n


def _table_trace(header: Sequence[str], cols: Sequence[Sequence[str]], widths: Sequence[float],
                 domain: Mapping[str, Sequence[float]]) -> dict[str, Any]:
    trace = _table(list(header), [list(c) for c in cols], "", widths)["data"][0]
    return dict(trace, domain={"x": list(domain["x"]), "y": list(domain["y"])})


def _heading(text: str, x: float, y: float) -> dict[str, Any]:
    return {"text": f"<b>{text}</b>", "xref": "paper", "yref": "paper", "x": x, "y": y, "xanchor": "left",
            "yanchor": "bottom", "showarrow": False, "font": {"size": 12}}


def _sheet_tables(record: Mapping[str, Any]) -> list[tuple[str, list[str], list[list[str]], list[float]]]:
    comp_header, comp_cols = comparison_columns(record)
    par_header, par_cols = key_constant_columns(record)
    return [("Comparison of fitted forms (★ best by AICc)", comp_header, comp_cols, COMPARISON_WIDTHS),
            ("Constants with 95% intervals", par_header, par_cols, [1.3, 3.0])]


def summary_sheets(record: Mapping[str, Any], *, width: int | None = None, height: int | None = None,
                   landscape: bool | None = None, view: Mapping[str, Any] | None = None) -> list[Figure]:
    """The summary sheet of ``width`` × ``height`` CSS pixels: data with fitted forms, residuals, the
    comparison and the constants; table rows that do not fit go on continuation pages, so every
    row of every table is printed. Returns one figure per page.

    Portrait stacks the parts; landscape puts the plots on the left and the tables on the right.
    The key of the forms stands beside the data plot, outside both plot areas.
    """
    if landscape is None:
        landscape = bool(width and height and width > height)
    w, h = (width, height) if width and height else (LANDSCAPE if landscape else PORTRAIT)
    pw, ph = w - _PAGE_MARGIN["l"] - _PAGE_MARGIN["r"], h - _PAGE_MARGIN["t"] - _PAGE_MARGIN["b"]
    fits = fits_from_record(record)
    app_figs = app_panels(record, fits, view)
    data_fig, res_fig = app_figs["data"], app_figs["residuals"]
    if landscape:
        plot_x, key_x = [0.0, 0.36], 0.38
        d_dom, r_dom = (plot_x, [0.42, 0.9]), (plot_x, [0.0, 0.3])
        regions = [([0.6, 1.0], [0.5, 0.9]), ([0.6, 1.0], [0.0, 0.42])]
    else:
        # Gaps leave room for each plot's axis title above the next part's heading.
        plot_x, key_x = [0.0, 0.7], 0.72
        d_dom, r_dom = (plot_x, [0.67, 0.97]), (plot_x, [0.44, 0.6])
        regions = [([0.0, 1.0], [0.22, 0.37]), ([0.0, 1.0], [0.0, 0.17])]
    layout = _layout(sheet_heading(record), "", "")
    layout["title"].update(y=0.985, yanchor="top", yref="container", x=0.015, xref="container", font={"size": 15},
                           pad={"t": 4})
    layout["margin"] = dict(_PAGE_MARGIN)
    for fig in (data_fig, res_fig):
        fig["layout"].pop("title", None)
    layout["xaxis"] = dict(data_fig["layout"]["xaxis"], domain=d_dom[0], anchor="y")
    layout["yaxis"] = dict(data_fig["layout"]["yaxis"], domain=d_dom[1], anchor="x")
    layout["xaxis2"] = dict(res_fig["layout"]["xaxis"], domain=r_dom[0], anchor="y2")
    layout["yaxis2"] = dict(res_fig["layout"]["yaxis"], domain=r_dom[1], anchor="x2")
    if "yaxis2" in res_fig["layout"]:  # two residual scales: the second keeps its own axis
        top, low = res_fig["layout"]["yaxis"], res_fig["layout"]["yaxis2"]
        span = r_dom[1][1] - r_dom[1][0]
        layout["yaxis2"] = dict(top, domain=[r_dom[1][0] + 0.56 * span, r_dom[1][1]], anchor="x2")
        layout["yaxis3"] = dict(low, domain=[r_dom[1][0], r_dom[1][0] + 0.44 * span], anchor="x2")
        layout["xaxis2"]["anchor"] = "y3"
    layout["legend"] = {"x": key_x, "xanchor": "left", "y": d_dom[1][1], "yanchor": "top", "orientation": "v",
                        "font": {"size": 10}, "bgcolor": "rgba(0,0,0,0)", "tracegroupgap": 2}
    layout["showlegend"] = True
    layout["shapes"] = [
        *(dict(s, xref="x domain" if s.get("xref") == "paper" else s.get("xref", "x"), yref="y")
          for s in data_fig["layout"].get("shapes") or []),
        *(dict(s, xref="x2 domain", yref="y3" if s.get("yref") == "y2" else "y2", x0=0, x1=1)
          for s in res_fig["layout"].get("shapes") or []),
    ]
    layout["annotations"] = [
        *({**a, "xref": "x domain" if a.get("xref") == "paper" else a.get("xref", "x"),
           "yref": "y domain" if a.get("yref") == "paper" else a.get("yref", "y")}
          for a in data_fig["layout"].get("annotations") or []),
        _heading("Observations and fitted forms", d_dom[0][0], d_dom[1][1] + 0.003),
        _heading("Residuals", r_dom[0][0], r_dom[1][1] + 0.003),
    ]
    res_traces = [dict(t, xaxis="x2", yaxis="y3" if t.get("yaxis") == "y2" else "y2", showlegend=False)
                  for t in res_fig["data"]]
    traces = _moved(data_fig["data"], "x") + res_traces
    pages: list[Figure] = [{"data": traces, "layout": layout}]
    leftovers: list[tuple[str, list[str], list[list[str]], list[float]]] = []
    continued_headings: list[dict[str, Any]] = []
    for (title, header, cols, widths), (x_dom, y_dom) in zip(_sheet_tables(record), regions, strict=True):
        head_px, rows_px = _row_heights(header, cols, widths, (x_dom[1] - x_dom[0]) * pw)
        room = (y_dom[1] - y_dom[0]) * ph - head_px
        n = _fitting(rows_px, room)
        rest = [c[n:] for c in cols]
        shown_y = [y_dom[1] - (head_px + sum(rows_px[:n]) + 2) / ph, y_dom[1]]
        traces.append(_table_trace(header, [c[:n] for c in cols], widths, {"x": x_dom, "y": shown_y}))
        heading = _heading(title, x_dom[0], y_dom[1] + 0.003)
        layout["annotations"].append(heading)
        if rest and rest[0]:
            leftovers.append((title, header, rest, widths))
            continued_headings.append(heading)
    pages += _continuation_pages(record, leftovers, w, h)
    for heading in continued_headings:
        heading["text"] = heading["text"].replace("</b>", " (continued on the next page)</b>")
    if len(pages) > 1:
        for k, page in enumerate(pages):
            page["layout"]["title"]["text"] = sheet_heading(record, page=(k + 1, len(pages)))
    return pages


def _continuation_pages(record: Mapping[str, Any], blocks: list[tuple[str, list[str], list[list[str]], list[float]]],
                        w: int, h: int) -> list[Figure]:
    """Pages holding the table rows that did not fit on the first page, each table under its heading."""
    margin = dict(_PAGE_MARGIN, t=80)
    pw, ph = w - margin["l"] - margin["r"], h - margin["t"] - margin["b"]
    pages: list[Figure] = []
    page: Figure | None = None
    top = 0.0
    for title, header, cols, widths in blocks:
        head_px, rows_px = _row_heights(header, cols, widths, pw)
        start = 0
        while start < len(rows_px):
            room = ph - top - _HEADING_PX - head_px
            n = _fitting(rows_px[start:], room)
            if n == 0 and page is not None and top > 0:
                page, top = None, 0.0  # the next page
                continue
            n = max(n, 1)
            if page is None:
                layout = _layout("", "", "")
                layout.pop("xaxis"), layout.pop("yaxis")
                layout["title"].update(y=0.985, yanchor="top", yref="container", x=0.015, xref="container",
                                       font={"size": 15}, pad={"t": 4})
                layout.update(margin=margin, annotations=[], showlegend=False)
                page = {"data": [], "layout": layout}
                pages.append(page)
            y1 = 1.0 - (top + _HEADING_PX) / ph
            y0 = y1 - (head_px + sum(rows_px[start:start + n]) + 2) / ph
            page["data"].append(_table_trace(header, [c[start:start + n] for c in cols], widths,
                                             {"x": [0.0, 1.0], "y": [max(y0, 0.0), y1]}))
            page["layout"]["annotations"].append(_heading(f"{title} (continued)", 0.0, y1 + 0.002))
            top += _HEADING_PX + head_px + sum(rows_px[start:start + n]) + 16
            start += n
    return pages


def summary_sheet(record: Mapping[str, Any], *, landscape: bool = False) -> Figure:
    """The first page of :func:`summary_sheets` at the default page size."""
    return summary_sheets(record, landscape=landscape)[0]
