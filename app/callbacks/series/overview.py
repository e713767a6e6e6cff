"""The overview grid of every series (a page at a time), the plate map, and the list of failed fits."""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from typing import Any

from dash import Dash, Input, Output, State, ctx, html
from dash.exceptions import PreventUpdate

from growthcore.batch import parse_well
from growthcore.batch.table import METRICS
from growthcore.figures.batch import data_ranges, overview_grid, plate_map
from growthcore.numbers import finite_or_none

from ... import ids
from ...ticks import stopped
from .groups import members
from .read import series_from_plain
from .run import merged_fits

PAGE = 96               # panels per page of the overview grid
GRID_REDRAW_S = 3.0     # while a run goes on, the grid (slow to draw in the browser) is redrawn at most this often
PLATE_METRICS = ("rmse", "r2", "r2_uncentered", "aicc", "bic", "durbin_watson", "runs_p")
#: Shown instead of a fit for a series the current run has not reached; the figure builder draws
#: such a panel with its data only.
NOT_FITTED = {"status": "not fitted", "message": "", "fit_t": [], "fit_p": []}


def form_choice(labels: Sequence[str], current: str | None) -> tuple[list[dict[str, str]], str | None]:
    options = [{"label": label, "value": label} for label in labels]
    return options, (current if current in labels else (labels[0] if labels else None))


def page_choice(n: int, current: int | None) -> tuple[list[dict[str, Any]], int, bool]:
    """Options, value, and whether the page control is useful (more than one page)."""
    pages = max(1, math.ceil(n / PAGE))
    options = [{"label": f"{i * PAGE + 1}–{min(n, (i + 1) * PAGE)} of {n}", "value": i} for i in range(pages)]
    value = current if isinstance(current, int) and 0 <= current < pages else 0
    return options, value, pages > 1


def highlight_shape(box: Sequence[float] | None) -> dict[str, Any]:
    """The frame around the series shown in the panels (invisible when it is not on this page)."""
    if box is None:
        return {"type": "rect", "xref": "paper", "yref": "paper", "x0": 0, "x1": 0, "y0": 0, "y1": 0,
                "visible": False, "line": {"width": 0}}
    x0, x1, y0, y1 = box
    pad = 0.004
    return {"type": "rect", "xref": "paper", "yref": "paper", "x0": x0 - pad, "x1": x1 + pad, "y0": y0 - pad,
            "y1": y1 + 0.012, "line": {"width": 2.5, "color": "#0b5d8c"}, "fillcolor": "rgba(0,0,0,0)",
            "visible": True, "layer": "above"}


def grid_figure(batch: Mapping[str, Any] | None, labels: Sequence[str], merged: Mapping[str, Mapping[str, Any]],
                label: str | None, shown_ids: Sequence[str], page: int, current: str | None,
                *, running: bool = False) -> tuple[dict[str, Any], dict[str, Any]]:
    """The overview grid of one page and the view store (ids on the page and their panel boxes)."""
    if not batch:
        return {"data": [], "layout": {}}, {}
    by_name = {d["name"]: d for d in batch["series"]}
    start = page * PAGE
    page_ids = list(shown_ids[start:start + PAGE])
    fits = merged.get(label, {}) if label else {}
    panels = []
    for sid in page_ids:
        s = series_from_plain(by_name[sid])
        entry = fits.get(sid, NOT_FITTED)
        panels.append({"series": sid, "t": [float(v) for v in s.t], "p": [finite_or_none(v) for v in s.p],
                       "used": [bool(u) for u in s.used], "fit_t": entry["fit_t"], "fit_p": entry["fit_p"],
                       "status": entry["status"], "message": entry["message"]})
    n_shown = len(shown_ids)
    span = f"series {start + 1}–{start + len(page_ids)} of {n_shown}" if n_shown > PAGE else f"{n_shown} series"
    fitted = sum(1 for sid in shown_ids if sid in fits)
    if not label:
        head = f"Data of {span} (not fitted yet)"
    else:
        head = f"{label}: {span}"
        if fitted < n_shown:
            head += f" · fitted so far: {fitted} of {n_shown}" if running else f" · {n_shown - fitted} not fitted"
    unit = batch.get("value_unit") or ""
    columns = 12 if batch.get("plate") else 8
    # one time range and one value range for every panel, so that panels compare by eye
    scales = data_ranges(panels)
    if scales is not None:
        (t_lo, t_hi), (p_lo, p_hi) = scales[1]
        t_unit = f" {batch['time_unit']}" if batch.get("time_unit") else ""
        head += f" · same scales in every panel: t {t_lo:.4g} to {t_hi:.4g}{t_unit}, value {p_lo:.4g} to {p_hi:.4g}"
        head += f" {unit}" if unit else ""
    fig = overview_grid(panels, columns=min(columns, max(1, len(panels))), max_panels=PAGE, title=head,
                        scales=scales[0] if scales is not None else None)
    if not page_ids:
        fig["layout"]["annotations"] = [{"text": "No series in this group.", "showarrow": False, "xref": "paper",
                                         "yref": "paper", "x": 0.5, "y": 0.5}]
    boxes = {panel["series"]: panel["box"] for panel in fig["layout"]["meta"]["panels"]}
    fig["layout"]["shapes"] = [highlight_shape(boxes.get(current or "")), *fig["layout"].get("shapes", [])]
    fig["layout"]["uirevision"] = batch["key"]
    return fig, {"key": batch["key"], "boxes": boxes}


def redraw_too_soon(view: Mapping[str, Any] | None, job: Mapping[str, Any] | None, *,
                    now: float | None = None) -> bool:
    """True while a run goes on and the grid of this run was drawn less than GRID_REDRAW_S ago."""
    if not view or not job or view.get("run") != job.get("run"):
        return False
    return (time.time() if now is None else now) - float(view.get("drawn", 0.0)) < GRID_REDRAW_S


def quantity_options(merged: Mapping[str, Mapping[str, Any]], label: str | None,
                     current: str | None) -> tuple[list[dict[str, str]], str | None]:
    """Constants of the shown form first, then the metrics; K is the default where a form has it."""
    entries = merged.get(label or "", {})
    names: list[str] = []
    for entry in entries.values():
        for k in entry.get("values", {}):
            if k not in names and k not in METRICS and k not in PLATE_METRICS and not k.endswith("_se"):
                names.append(k)
    metric_names = [m for m in PLATE_METRICS if any(m in e.get("values", {}) for e in entries.values())]
    labels = {"rmse": "RMSE", "r2": "R² (states)", "r2_uncentered": "uncentered R² (Δp)", "aicc": "AICc", "bic": "BIC",
              "durbin_watson": "Durbin–Watson", "runs_p": "runs test p"}
    options = [{"label": f"constant {n}", "value": n} for n in names]
    options += [{"label": labels[m], "value": m} for m in metric_names]
    values = [o["value"] for o in options]
    if current in values:
        return options, current
    return options, ("K" if "K" in values else (values[0] if values else None))


def plate_figure(batch: Mapping[str, Any] | None, merged: Mapping[str, Mapping[str, Any]], label: str | None,
                 quantity: str | None, shown_ids: Sequence[str], group: str | None,
                 current: str | None) -> dict[str, Any]:
    """The plate map of one quantity; wells not fitted yet or outside the chosen group are left blank."""
    if not batch or not batch.get("plate"):
        return {"data": [], "layout": {}}
    fits = merged.get(label or "", {})
    shown = set(shown_ids)
    values: dict[str, dict[str, Any]] = {}
    notes: dict[str, str] = {}
    for sid in batch["names"]:
        entry = fits.get(sid)
        if sid not in shown:
            values[sid] = {"value": None, "status": "not fitted", "message": ""}
            notes[sid] = f"not in group {group}"
        elif entry is None:
            values[sid] = {"value": None, "status": "not fitted", "message": ""}
            notes[sid] = "not fitted yet"
        else:
            values[sid] = {"value": entry["values"].get(quantity or "") if entry["status"] == "converged" else None,
                           "status": entry["status"], "message": entry["message"]}
    name = quantity or "value"
    title = f"Plate map: {name} of {label}" if label else "Plate map (fit the series to colour the wells)"
    fig = plate_map(values, quantity=name, title=title)
    heat = fig["data"][0]
    for sid, note in notes.items():
        pos = parse_well(sid)
        if pos is not None:
            heat["text"][pos[0]][pos[1]] = note
    fig["layout"]["shapes"] = [plate_highlight(current)]
    fig["layout"]["uirevision"] = batch["key"]
    rows, cols = batch["plate"]
    fig["layout"]["height"] = 80 + 34 * rows if cols == 12 else 80 + 22 * rows
    return fig


def plate_highlight(current: str | None) -> dict[str, Any]:
    pos = parse_well(current or "")
    if pos is None:
        return {"type": "rect", "x0": 0, "x1": 0, "y0": 0, "y1": 0, "visible": False, "line": {"width": 0}}
    r, c = pos
    return {"type": "rect", "xref": "x", "yref": "y", "x0": c + 0.5, "x1": c + 1.5, "y0": r - 0.5, "y1": r + 0.5,
            "line": {"width": 3, "color": "#ffffff"}, "fillcolor": "rgba(0,0,0,0)", "visible": True, "layer": "above"}


def failed_list(merged: Mapping[str, Mapping[str, Any]], label: str | None, shown_ids: Sequence[str]) -> Any:
    entries = merged.get(label or "", {})
    bad = [(sid, entries[sid]["message"]) for sid in shown_ids
           if sid in entries and entries[sid]["status"] != "converged"]
    if not bad:
        return None
    items = [html.Li([html.Strong(sid), f": {msg}"]) for sid, msg in bad[:30]]
    more = [html.Li(f"… and {len(bad) - 30} more")] if len(bad) > 30 else []
    return html.Details([html.Summary(f"{len(bad)} fit(s) of {label} failed: why"), html.Ul(items + more)],
                        open=len(bad) <= 5)


def register(app: Dash) -> None:
    @app.callback(
        Output(ids.GRID, "figure"), Output(ids.GRID, "style"), Output(ids.GRID_VIEW, "data"),
        Output(ids.BATCH_FORM, "options"),
        Output(ids.BATCH_FORM, "value"), Output(ids.GRID_PAGE, "options"), Output(ids.GRID_PAGE, "value"),
        Output(ids.GRID_PAGE, "disabled"), Output(ids.BATCH_FAILED, "children"),
        Input(ids.BATCH_SERIES, "data"), Input(ids.BATCH_FITS, "data"), Input(ids.BATCH_FORM, "value"),
        Input(ids.GRID_PAGE, "value"), Input(ids.BATCH_GROUPS, "data"), Input(ids.GROUP_FILTER, "value"),
        # a stop redraws: the last chunks of a run may have been held back to spare redraws
        Input(ids.BATCH_CANCEL, "data"),
        State(ids.BATCH_JOB, "data"), State(ids.BATCH_PROGRESS, "data"),
        State(ids.DATA, "data"), State(ids.GRID_VIEW, "data"),
    )
    def _grid(batch, fits, label, page, groups, group, cancel, job, progress, data, view):
        if not batch:
            raise PreventUpdate
        labels, merged = merged_fits(fits, job, batch)
        options, label = form_choice(labels, label)
        shown = members(batch, groups, group)
        if ctx.triggered_id == ids.GROUP_FILTER:
            page = 0
        page_options, page, many = page_choice(len(shown), page)
        running = bool(job and progress and progress.get("run") == job.get("run")
                       and progress.get("done", 0) < job.get("total", 0) and not progress.get("error")
                       and not stopped(cancel, job.get("run")))
        if ctx.triggered_id == ids.BATCH_FITS and running and redraw_too_soon(view, job):
            raise PreventUpdate
        fig, view = grid_figure(batch, labels, merged, label, shown, page, (data or {}).get("name"), running=running)
        view.update(run=(job or {}).get("run"), drawn=time.time())
        style = {"height": f"{fig['layout'].get('height', 220)}px"}
        return fig, style, view, options, label, page_options, page, not many, failed_list(merged, label, shown)

    @app.callback(
        Output(ids.PLATE, "figure"), Output(ids.PLATE, "style"), Output(ids.PLATE_QUANTITY, "options"),
        Output(ids.PLATE_QUANTITY, "value"),
        Input(ids.BATCH_SERIES, "data"), Input(ids.BATCH_FITS, "data"), Input(ids.BATCH_FORM, "value"),
        Input(ids.PLATE_QUANTITY, "value"), Input(ids.BATCH_GROUPS, "data"), Input(ids.GROUP_FILTER, "value"),
        State(ids.BATCH_JOB, "data"), State(ids.DATA, "data"),
    )
    def _plate(batch, fits, label, quantity, groups, group, job, data):
        if not batch or not batch.get("plate"):
            raise PreventUpdate
        labels, merged = merged_fits(fits, job, batch)
        _, label = form_choice(labels, label)
        options, quantity = quantity_options(merged, label, quantity)
        shown = members(batch, groups, group)
        fig = plate_figure(batch, merged, label, quantity, shown, group, (data or {}).get("name"))
        return fig, {"height": f"{fig['layout']['height']}px"}, options, quantity
