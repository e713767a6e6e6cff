"""Many series: reading every series of the file, replicate groups, the chunked batch run, the
overview grid, the plate map, and opening a clicked series in the panels.

The batch runs in this server process, one chunk of series per tick of a dcc.Interval; every
chunk adds its fits to the fits store in place (a Patch), so the page shows progress and the
user can stop the run. Nothing is kept on the server between requests.
"""

from __future__ import annotations

import dataclasses
import math
import time
from typing import Any, Mapping, Sequence

import numpy as np
from dash import Dash, Input, Output, Patch, State, ctx, html, no_update
from dash.exceptions import PreventUpdate

from app import ids
from app.callbacks.data import DEFAULT_MAX_BYTES, decode_source, server_limits, value_columns
from app.heavy import direct, runner_of
from app.components.series import ALL_GROUPS
from app.figures.batch import data_ranges, overview_grid, plate_map
from app.state import check_points, fit_label
from growthcore.batch import fit_batch, from_series, groups_from_conditions, groups_from_pattern, parse_well, plate_format
from growthcore.batch.table import METRICS, row
from growthcore.batch.views import overview_panels
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.io import ImportReport, load_bytes
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits

PAGE = 96               # panels per page of the overview grid
CHUNK_MIN = 16          # series per tick at least ...
CHUNK_TICKS = 12        # ... and about this many ticks for a large file
PATH_POINTS = 120       # points kept of each fitted path (enough for a panel a few hundred pixels wide)
GRID_REDRAW_S = 3.0     # while a run goes on, the grid (slow to draw in the browser) is redrawn at most this often
PLATE_METRICS = ("rmse", "r2", "r2_uncentered", "aicc", "bic", "durbin_watson", "runs_p")
#: Shown instead of a fit for a series the current run has not reached; the figure builder draws
#: such a panel with its data only.
NOT_FITTED = {"status": "not fitted", "message": "", "fit_t": [], "fit_p": []}


# ---------------------------------------------------------------------------------------------
# every series of the file

def _num(x: Any) -> float | None:
    return float(x) if x is not None and math.isfinite(float(x)) else None


def series_to_plain(s: Series) -> dict[str, Any]:
    return {
        "name": s.name, "t": [_num(v) for v in s.t], "p": [_num(v) for v in s.p],
        "excluded": {str(k): v for k, v in s.excluded.items()}, "rows": list(s.rows) if s.rows is not None else None,
        "time_unit": s.time_unit, "value_unit": s.value_unit, "time_column": s.time_column,
        "value_column": s.value_column,
    }


def series_from_plain(d: Mapping[str, Any]) -> Series:
    check_points(len(d["t"]), d.get("name"))
    return Series(
        t=np.asarray(d["t"], dtype=float), p=np.asarray([math.nan if v is None else v for v in d["p"]], dtype=float),
        name=d["name"], time_unit=d.get("time_unit", ""), value_unit=d.get("value_unit", ""),
        time_column=d.get("time_column", "t"), value_column=d.get("value_column", "p"),
        excluded={int(k): str(v) for k, v in (d.get("excluded") or {}).items()},
        rows=tuple(d["rows"]) if d.get("rows") else None,
    )


def _mapping(choices: Mapping[str, Any]) -> dict[str, Any]:
    """The import options of the choices the shown series was read with (see ``import_source``)."""
    return {"time": choices.get("time") or None, "value": value_columns(choices.get("value")), "series": choices.get("series_column") or None,
            "time_unit": choices.get("time_unit") or None, "sheet": choices.get("sheet") or None,
            "replicates": choices.get("replicates") or "all"}


def batch_key(data: Mapping[str, Any], mapping: Mapping[str, Any]) -> str:
    """The file and the import choices: the same key means the same series, whichever is shown."""
    return f"{data.get('sha256')}|" + "|".join(f"{k}={mapping[k]}" for k in sorted(mapping))


def read_all_series(source: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                    previous: Mapping[str, Any] | None, *, limits: Limits | None = None,
                    run: Any = direct) -> dict[str, Any] | None:
    """Every series of the shown file, read with the same choices, as plain data; None for one series.

    The file is read (as a heavy job, through ``run``) under the server's ``limits``. Raises
    PreventUpdate when ``previous`` already holds these series (a pick within the same file).
    """
    if not source or not data or len(data.get("series_names", [])) < 2:
        if previous is None:
            raise PreventUpdate
        return None
    mapping = _mapping(data.get("choices") or {})
    key = batch_key(data, mapping)
    if previous and previous.get("key") == key:
        raise PreventUpdate
    limits = limits or dataclasses.replace(DEFAULT_LIMITS, max_bytes=DEFAULT_MAX_BYTES)
    return {"key": key, "source": data.get("source", ""), "mapping": mapping,
            **run("reading every series", plain_series, source, mapping, limits)}


def plain_series(source: Mapping[str, Any], mapping: Mapping[str, Any], limits: Limits) -> dict[str, Any]:
    """Every series of ``source`` as plain data (the heavy part of :func:`read_all_series`)."""
    imported = load_bytes(decode_source(source, limits.max_bytes), source.get("filename") or "upload",
                          max_bytes=limits.max_bytes, limits=limits, **mapping)
    names = [s.name for s in imported.series]
    fmt = plate_format(names)
    first = imported.series[0]
    report = imported.report
    return {"names": names, "series": [series_to_plain(s) for s in imported.series],
            "plate": list(fmt) if fmt else None, "time_unit": first.time_unit, "value_unit": first.value_unit,
            "report": report.to_dict(), "conditions": list(report.columns_with("condition") + report.columns_with("covariate"))}


# ---------------------------------------------------------------------------------------------
# replicate groups

def compute_groups(mode: str | None, text: str | None, batch: Mapping[str, Any] | None, *,
                   limits: Limits = DEFAULT_LIMITS) -> tuple[dict[str, Any] | None, Any, list[dict[str, Any]], str]:
    """Outputs: the groups store, the message under the inputs, the group filter's options and value."""
    everything = [{"label": "all series", "value": ALL_GROUPS}]
    if not batch:
        return None, "", everything, ALL_GROUPS
    names = list(batch["names"])
    text = (text or "").strip()
    conditions = list(batch.get("conditions") or [])
    if mode in (None, "none") or not text:
        if mode == "pattern":
            hint = "Type a regular expression; its first group (or the whole match) names the group."
        elif mode == "column":
            hint = (f"Conditions of this file: {', '.join(conditions)}. Type one, or several separated by commas "
                    "(groups such as 1988 × F)." if conditions else
                    "This file has no condition column (a column constant within each series); group by a pattern.")
        else:
            hint = f"This file's series can be grouped by {', '.join(conditions)}." if conditions else ""
        return {"key": batch["key"], "groups": {}}, hint, everything, ALL_GROUPS
    try:
        if mode == "pattern":
            groups, notes = groups_from_pattern(names, text, max_length=limits.max_pattern)
        else:
            groups, notes = groups_from_conditions(ImportReport.from_dict(batch["report"]), text)
    except GrowthcoreInputError as exc:
        message = html.Div([html.Strong("Groups not made. "), str(exc).splitlines()[0]], className="message message-error")
        return {"key": batch["key"], "groups": {}}, message, everything, ALL_GROUPS
    labels = list(dict.fromkeys(groups[n] for n in names if n in groups))
    counts = {g: sum(1 for n in names if groups.get(n) == g) for g in labels}
    options = everything + [{"label": f"{g} ({counts[g]})", "value": g} for g in labels]
    lines: list[Any] = [html.Div(f"{len(labels)} group(s) of {len(groups)} series.")]
    lines.extend(html.Div(n, className="message-warn-text") for n in notes)
    return {"key": batch["key"], "groups": groups}, lines, options, ALL_GROUPS


def members(batch: Mapping[str, Any], groups: Mapping[str, Any] | None, chosen: str | None) -> list[str]:
    """Series ids of the chosen group in file order (every id for all groups)."""
    names = list(batch["names"])
    if not chosen or chosen == ALL_GROUPS or not groups or groups.get("key") != batch.get("key"):
        return names
    mapping = groups.get("groups", {})
    return [n for n in names if mapping.get(n) == chosen]


# ---------------------------------------------------------------------------------------------
# the chunked run

def methods_of(settings: Mapping[str, Any]) -> list[str]:
    method = settings.get("method", "increments")
    return ["increments", "trajectory"] if method == "both" else [method]


def chunk_size(n: int) -> int:
    return max(CHUNK_MIN, math.ceil(n / CHUNK_TICKS))


def start_run(settings: Mapping[str, Any] | None, batch: Mapping[str, Any] | None, previous_job: Mapping[str, Any] | None,
              *, now: float | None = None) -> tuple[Any, ...]:
    """Outputs: job, fits store, progress, tick disabled, tick n_intervals, tick max_intervals."""
    if not batch or not settings:
        raise PreventUpdate
    run = int((previous_job or {}).get("run", 0)) + 1
    n = len(batch["names"])
    size = chunk_size(n)
    job = {
        "run": run, "key": batch["key"], "models": list(settings.get("models", [])), "terms": list(settings.get("terms", [])),
        "methods": methods_of(settings), "error": settings.get("error", "additive"), "total": n, "chunk": size,
        "chunks": math.ceil(n / size), "started": time.time() if now is None else now,
    }
    if not job["models"]:
        progress = {"run": run, "done": 0, "error": "Choose at least one form in the Model section first."}
        return job, {"run": run, "chunks": {}}, progress, True, 0, 0
    progress = {"run": run, "done": 0, "chunks_done": 0, "failed": 0, "elapsed": 0.0, "error": None}
    return job, {"run": run, "chunks": {}}, progress, False, 0, 1


def _thin(t: Sequence[float], p: Sequence[float | None]) -> tuple[list[float], list[float | None]]:
    if len(t) <= PATH_POINTS:
        return list(t), list(p)
    keep = sorted(set(np.linspace(0, len(t) - 1, PATH_POINTS).round().astype(int).tolist()))
    return [t[i] for i in keep], [p[i] for i in keep]


def fit_chunk(job: Mapping[str, Any], batch: Mapping[str, Any], groups: Mapping[str, Any] | None,
              index: int) -> dict[str, Any]:
    """Every form (and method) of the job fitted to chunk ``index`` of the series, as plain data.

    Returns {"labels": [...], "fits": {label: {series id: entry}}, "failed": n} where each entry has
    status, message, the thinned fitted path and the values of every constant and metric.
    """
    size = int(job["chunk"])
    # the job and the series come from the tab: bounded here by the server's own limits
    if len(batch["series"]) > DEFAULT_LIMITS.max_series or not 1 <= size <= chunk_size(len(batch["series"])):
        raise GrowthcoreInputError(f"a batch chunk of {size} of {len(batch['series'])} series is not one this server "
                                   "makes: start the run again")
    fits_asked = len(job["models"]) * len(job["methods"])
    if fits_asked > DEFAULT_LIMITS.max_fits:
        raise GrowthcoreInputError(f"{fits_asked} fits per series, over the limit of {DEFAULT_LIMITS.max_fits}: refused")
    chunk = [series_from_plain(d) for d in batch["series"][index * size:(index + 1) * size]]
    mapping = groups.get("groups", {}) if groups and groups.get("key") == batch.get("key") else {}
    data = from_series(chunk, groups={n: g for n, g in mapping.items()})
    fits: dict[str, dict[str, Any]] = {}
    labels: list[str] = []
    failed = 0
    used = {s.name: int(s.used.sum()) for s in chunk}
    for method in job["methods"]:
        result = fit_batch(data, job["models"], method=method, error=job["error"], terms=job.get("terms", ()),
                           workers=1, chunk_size=max(1, len(chunk)))
        params = sorted({p.name for f in result.fits for p in f.result.parameters})
        for model in result.models:
            panels = {p["series"]: p for p in overview_panels(result, model)}
            for sf in result.for_model(model):
                label = fit_label(sf.result)
                if label not in fits:
                    fits[label] = {}
                    labels.append(label)
                flat = row(sf, params, used.get(sf.series))
                keys = (*params, *(f"{n}_se" for n in params), *METRICS, "durbin_watson", "runs_p")
                values = {k: flat[k] for k in keys if flat.get(k) is not None and k != "n"}
                panel = panels[sf.series]
                fit_t, fit_p = _thin(panel["fit_t"], panel["fit_p"])
                fits[label][sf.series] = {"status": sf.result.status, "message": sf.result.message,
                                          "fit_t": fit_t, "fit_p": fit_p, "values": values}
                failed += 0 if sf.result.success else 1
    return {"labels": labels, "fits": fits, "failed": failed}


def run_tick(n_intervals: int | None, job: Mapping[str, Any] | None, batch: Mapping[str, Any] | None,
             groups: Mapping[str, Any] | None, progress: Mapping[str, Any] | None,
             cancel: Mapping[str, Any] | None, *, now: float | None = None, run: Any = direct) -> tuple[Any, Any, Any]:
    """One tick: fit the next chunk. Outputs: fits-store Patch, progress, tick max_intervals."""
    if not n_intervals or not job or not batch:
        raise PreventUpdate
    if cancel and cancel.get("run") == job["run"]:
        raise PreventUpdate
    index = int(n_intervals) - 1
    if index >= int(job["chunks"]):
        raise PreventUpdate
    base = dict(progress) if progress and progress.get("run") == job["run"] else {
        "run": job["run"], "done": 0, "chunks_done": 0, "failed": 0, "elapsed": 0.0, "error": None}
    if batch.get("key") != job.get("key"):
        base["error"] = "The file changed during the run; start it again for the new file."
        return no_update, base, no_update
    try:
        out = run("the batch chunk", fit_chunk, job, batch, groups, index)
    except GrowthcoreInputError as exc:
        base["error"] = str(exc).splitlines()[0]
        return no_update, base, no_update
    patch = Patch()
    patch["chunks"][f"{job['run']}:{index}"] = out
    done = min(int(job["total"]), (index + 1) * int(job["chunk"]))
    base.update(done=done, chunks_done=index + 1, failed=int(base.get("failed", 0)) + out["failed"],
                elapsed=round((time.time() if now is None else now) - float(job["started"]), 2))
    more = index + 1 < int(job["chunks"])
    return patch, base, (int(n_intervals) + 1 if more else int(n_intervals))


def stop_run(job: Mapping[str, Any] | None) -> tuple[Any, Any]:
    """Outputs: the cancel store and the tick's disabled flag."""
    if not job:
        raise PreventUpdate
    return {"run": job["run"]}, True


def merged_fits(fits: Mapping[str, Any] | None, job: Mapping[str, Any] | None,
                batch: Mapping[str, Any] | None) -> tuple[list[str], dict[str, dict[str, Any]]]:
    """Labels and {label: {series id: entry}} of the current run's chunks (chunks of older runs ignored)."""
    if not fits or not job or not batch or job.get("key") != batch.get("key") or fits.get("run") != job.get("run"):
        return [], {}
    prefix = f"{job['run']}:"
    labels: list[str] = []
    out: dict[str, dict[str, Any]] = {}
    chunks = fits.get("chunks", {})
    for key in sorted((k for k in chunks if k.startswith(prefix)), key=lambda k: int(k.split(":")[1])):
        part = chunks[key]
        for label in part["labels"]:
            if label not in out:
                out[label] = {}
                labels.append(label)
            out[label].update(part["fits"][label])
    return labels, out


def progress_view(job: Mapping[str, Any] | None, progress: Mapping[str, Any] | None,
                  cancel: Mapping[str, Any] | None) -> tuple[str, str, Any, bool]:
    """Outputs: bar value, bar max, status text, Stop disabled."""
    if not job or not progress or progress.get("run") != job.get("run"):
        return "0", "1", "Not fitted yet.", True
    total = int(job["total"])
    done = int(progress.get("done", 0))
    n_forms = len(job["models"]) * len(job["methods"])
    failed = int(progress.get("failed", 0))
    seconds = float(progress.get("elapsed", 0.0))
    failed_text = f"; {failed} fit(s) failed (marked in the grid)" if failed else "; no fit failed"
    if progress.get("error"):
        return str(done), str(total), html.Span([html.Strong("Stopped. "), progress["error"]],
                                                className="batch-error"), True
    if cancel and cancel.get("run") == job["run"]:
        return (str(done), str(total), f"Stopped by you after {done} of {total} series ({seconds:.1f} s){failed_text}; "
                "the rest are not fitted.", True)
    if done >= total:
        return (str(done), str(total), f"All {total} series fitted with {n_forms} form(s) in {seconds:.1f} s"
                f"{failed_text}.", True)
    return str(done), str(total), f"Fitting … {done} of {total} series × {n_forms} form(s) ({seconds:.1f} s){failed_text}.", False


# ---------------------------------------------------------------------------------------------
# pictures

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
        panels.append({"series": sid, "t": [float(v) for v in s.t], "p": [_num(v) for v in s.p],
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
    bad = [(sid, entries[sid]["message"]) for sid in shown_ids if sid in entries and entries[sid]["status"] != "converged"]
    if not bad:
        return None
    items = [html.Li([html.Strong(sid), f": {msg}"]) for sid, msg in bad[:30]]
    more = [html.Li(f"… and {len(bad) - 30} more")] if len(bad) > 30 else []
    return html.Details([html.Summary(f"{len(bad)} fit(s) of {label} failed: why"), html.Ul(items + more)],
                        open=len(bad) <= 5)


# ---------------------------------------------------------------------------------------------
# choosing a series

def clicked_series(click: Mapping[str, Any] | None) -> str | None:
    """The series id a click on a grid panel or a plate cell carries (None for an empty well)."""
    points = (click or {}).get("points") or []
    if not points:
        return None
    sid = points[0].get("customdata")
    if isinstance(sid, list):
        sid = sid[0] if sid else None
    return str(sid) if sid is not None else None


def step_series(current: str | None, order: Sequence[str], step: int) -> str | None:
    """The series ``step`` places from ``current`` in ``order``, wrapping round; the first when absent."""
    if not order:
        return None
    if current not in order:
        return order[0] if step > 0 else order[-1]
    return order[(list(order).index(current) + step) % len(order)]


def choose_series(trigger: str | None, grid_click: Any, plate_click: Any, data: Mapping[str, Any] | None,
                  batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None, group: str | None) -> Any:
    """The value for the series dropdown (which reads the series into the panels), or no_update."""
    if not batch:
        raise PreventUpdate
    current = (data or {}).get("name")
    if trigger == ids.GRID:
        target = clicked_series(grid_click)
    elif trigger == ids.PLATE:
        target = clicked_series(plate_click)
    elif trigger in (ids.SERIES_PREV, ids.SERIES_NEXT):
        target = step_series(current, members(batch, groups, group), -1 if trigger == ids.SERIES_PREV else 1)
    else:
        raise PreventUpdate
    if target is None or target == current or target not in batch["names"]:
        raise PreventUpdate
    return target


def position_text(data: Mapping[str, Any] | None, batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None,
                  group: str | None) -> str:
    if not batch or not data:
        return ""
    order = members(batch, groups, group)
    name = data.get("name")
    where = f"group {group}" if group and group != ALL_GROUPS else "the file"
    if name in order:
        return f"{name}: {order.index(name) + 1} of {len(order)} in {where}"
    return f"{name} (not in {where})"


def highlight_patches(data: Mapping[str, Any] | None, view: Mapping[str, Any] | None,
                      batch: Mapping[str, Any] | None) -> tuple[Any, Any]:
    """Patches that move the frame of the grid and the plate map to the series now in the panels.

    Only when the grid on screen was drawn for the file now shown; a new file redraws both anyway.
    """
    if not batch or not data or not view or view.get("key") != batch.get("key") \
            or not str(batch.get("key", "")).startswith(f"{data.get('sha256')}|"):
        raise PreventUpdate
    name = data.get("name")
    grid = Patch()
    grid["layout"]["shapes"][0] = highlight_shape(view.get("boxes", {}).get(name))
    plate: Any = no_update
    if batch.get("plate"):
        plate = Patch()
        plate["layout"]["shapes"][0] = plate_highlight(name)
    return grid, plate


# ---------------------------------------------------------------------------------------------

SCROLL_TO_PANELS = """
function(gridClick, plateClick) {
    var main = document.getElementById('main');
    if (main) { main.scrollIntoView({block: 'start'}); }
    return window.dash_clientside.no_update;
}
"""


def register(app: Dash) -> None:
    limits = server_limits(app)
    run = runner_of(app)

    @app.callback(
        Output(ids.BATCH_SERIES, "data"), Output(ids.PICKER_BOX, "hidden"), Output(ids.SERIES_OVERVIEW, "hidden"),
        Output(ids.PLATE_BOX, "hidden"),
        Input(ids.DATA, "data"),
        State(ids.SOURCE, "data"), State(ids.BATCH_SERIES, "data"),
    )
    def _read(data, source, previous):
        batch = read_all_series(source, data, previous, limits=limits, run=run)
        return batch, batch is None, batch is None, not (batch and batch.get("plate"))

    app.callback(
        Output(ids.BATCH_GROUPS, "data"), Output(ids.GROUP_MESSAGE, "children"), Output(ids.GROUP_FILTER, "options"),
        Output(ids.GROUP_FILTER, "value"),
        Input(ids.GROUP_MODE, "value"), Input(ids.GROUP_TEXT, "value"), Input(ids.BATCH_SERIES, "data"),
    )(lambda mode, text, batch: compute_groups(mode, text, batch, limits=limits))

    @app.callback(
        Output(ids.BATCH_JOB, "data"), Output(ids.BATCH_FITS, "data"), Output(ids.BATCH_PROGRESS, "data"),
        Output(ids.BATCH_TICK, "disabled"), Output(ids.BATCH_TICK, "n_intervals"),
        Output(ids.BATCH_TICK, "max_intervals"),
        Input(ids.BATCH_RUN, "n_clicks"),
        State(ids.SETTINGS, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_JOB, "data"),
        prevent_initial_call=True,
    )
    def _start(_n, settings, batch, job):
        return start_run(settings, batch, job)

    @app.callback(
        Output(ids.BATCH_FITS, "data", allow_duplicate=True), Output(ids.BATCH_PROGRESS, "data", allow_duplicate=True),
        Output(ids.BATCH_TICK, "max_intervals", allow_duplicate=True),
        Input(ids.BATCH_TICK, "n_intervals"),
        State(ids.BATCH_JOB, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_GROUPS, "data"),
        State(ids.BATCH_PROGRESS, "data"), State(ids.BATCH_CANCEL, "data"),
        running=[(Output(ids.BATCH_RUN, "disabled"), True, False)],
        prevent_initial_call=True,
    )
    def _tick(n, job, batch, groups, progress, cancel):
        return run_tick(n, job, batch, groups, progress, cancel, run=run)

    app.callback(
        Output(ids.BATCH_CANCEL, "data"), Output(ids.BATCH_TICK, "disabled", allow_duplicate=True),
        Input(ids.BATCH_STOP, "n_clicks"), State(ids.BATCH_JOB, "data"), prevent_initial_call=True,
    )(lambda _n, job: stop_run(job))

    app.callback(
        Output(ids.BATCH_BAR, "value"), Output(ids.BATCH_BAR, "max"), Output(ids.BATCH_STATUS, "children"),
        Output(ids.BATCH_STOP, "disabled"),
        Input(ids.BATCH_JOB, "data"), Input(ids.BATCH_PROGRESS, "data"), Input(ids.BATCH_CANCEL, "data"),
    )(progress_view)

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
                       and not (cancel and cancel.get("run") == job.get("run")))
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

    @app.callback(
        Output(ids.SERIES_PICK, "value", allow_duplicate=True),
        Input(ids.GRID, "clickData"), Input(ids.PLATE, "clickData"), Input(ids.SERIES_PREV, "n_clicks"),
        Input(ids.SERIES_NEXT, "n_clicks"),
        State(ids.DATA, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_GROUPS, "data"),
        State(ids.GROUP_FILTER, "value"),
        prevent_initial_call=True,
    )
    def _choose(grid_click, plate_click, _prev, _next, data, batch, groups, group):
        return choose_series(ctx.triggered_id, grid_click, plate_click, data, batch, groups, group)

    app.clientside_callback(SCROLL_TO_PANELS, Input(ids.GRID, "clickData"), Input(ids.PLATE, "clickData"),
                            prevent_initial_call=True)

    # the frame around the shown series moves without redrawing the grid or the map
    @app.callback(
        Output(ids.GRID, "figure", allow_duplicate=True), Output(ids.PLATE, "figure", allow_duplicate=True),
        Input(ids.DATA, "data"),
        State(ids.GRID_VIEW, "data"), State(ids.BATCH_SERIES, "data"),
        prevent_initial_call=True,
    )
    def _highlight(data, view, batch):
        return highlight_patches(data, view, batch)

    app.callback(
        Output(ids.SERIES_POSITION, "children"),
        Input(ids.DATA, "data"), Input(ids.BATCH_SERIES, "data"), Input(ids.BATCH_GROUPS, "data"),
        Input(ids.GROUP_FILTER, "value"),
    )(position_text)
