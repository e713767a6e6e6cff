"""Export of the chosen fits (record, PNGs, residual CSV, HTML report) and reopening a record.

The record is made by the one workflow ``growthcore fit`` takes (growthcore.workflow), from the plan
of the session's stores, so the command line can recompute it. PNGs are drawn in the
browser by plotly.js (assets/export.js); the server only sends the figures and their sizes.
"""

from __future__ import annotations

import base64
import binascii
import dataclasses
import datetime as _dt
import json
import re
from collections.abc import Mapping, Sequence
from typing import Any

from dash import ClientsideFunction, Dash, Input, Output, State, html, no_update

from growthcore import workflow
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.io.report import ImportResult
from growthcore.limits import Limits
from growthcore.record import DataSource
from growthcore.reopen import RecordError, parse_record, reopen
from growthcore.report.images import PANEL_SIZES, SHEET_SIZES
from growthcore.report.page import report_html
from growthcore.report.panels import export_view, panel_figures, summary_sheets
from growthcore.report.tables import residual_csv_text
from growthcore.uncertainty import DEFAULT_SEED
from growthcore.workflow import Extras

from .. import ids
from ..heavy import runner_of
from ..state import current_limits, data_to_store, empty_exclusions, series_from_store
from .data import summary
from .dynamics.bootstrap import resample_limit
from .dynamics.forecast import step_limit
from .dynamics.reopened import steps_from_settings
from .fits import session_plan
from .settings import expand_forms

#: The dashboard's exploration panels have no counterpart in the record; they are drawn from the
#: session as the screen shows them (a panel with nothing to show is left out, and not announced).
LIVE_PANELS = ((ids.G_CHANGE, "change-against-state", "Change per unit time against the state"),
               (ids.G_CANDIDATE, "change-against-candidate-terms", "Change per step against candidate terms"))
SHEET = "summary-sheet"
#: Longest run of form ids in a file name; beyond it the name counts the remaining forms.
FORMS_IN_NAME = 40


# --------------------------------------------------------------------------------------------
# The record of a session


def later_steps(forecast_store: Mapping[str, Any] | None = None,
                boot_done: Mapping[str, Any] | None = None) -> Extras:
    """The later steps of the plan that reproduce what the dynamics panel shows.

    Its latest finished (or cancelled) bootstrap gives the resamples done and the seed; resample b is
    seeded by (seed, b), so the record's refits are the panel's. Its drawn forecast gives the steps or
    span and the bound. As on the command line, both apply to every exported form.
    """
    resamples, seed = None, DEFAULT_SEED
    finished = [entry.get("summary") or {} for entry in (boot_done or {}).values()]
    finished = [s for s in finished if s.get("done")]
    if finished:
        resamples = int(finished[-1]["done"])
        seed = int(finished[-1].get("seed", seed))
    request = (forecast_store or {}).get("request") or {}
    steps = int(request["amount"]) if request.get("mode") == "steps" else None
    span = float(request["amount"]) if request.get("mode") == "span" else None
    return Extras(bootstrap=resamples, seed=seed, forecast_steps=steps, forecast_span=span,
                  bound=request.get("bound") if request else None)


def session_record(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, settings: Mapping[str, Any],
                   capacity: float | None, *, forms: Sequence[str] | None = None,
                   created: _dt.datetime | None = None, forecast_store: Mapping[str, Any] | None = None,
                   boot_done: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The sealed fit record of the session's chosen forms: the plan of the stores, carried out as
    ``growthcore fit`` carries out the plan of its options (a form the engine refuses is left out)."""
    plan = session_plan(settings, capacity, forms=forms, extras=later_steps(forecast_store, boot_done))
    report = data.get("report") or {}
    source = DataSource(str(report.get("source", data.get("source", ""))), str(data.get("sha256", "")),
                        dict(report) if report else None)
    # the K shown in the exploration panels, and how replicates were read: beside the plan's settings
    provenance = {"capacity_estimate": float(capacity) if capacity is not None else None,
                  "replicates": report.get("replicates", (data.get("choices") or {}).get("replicates", "all"))}
    return workflow.run(series_from_store(data, exclusions), plan, source=source, provenance=provenance,
                        created=created, skip_refused=True).record


# --------------------------------------------------------------------------------------------
# Files


def file_stem(name: str) -> str:
    """A file-name-safe stem from the series name ('Tank A / run 2' -> 'Tank-A-run-2')."""
    stem = re.sub(r"[^A-Za-z0-9._-]+", "-", name).strip("-.")
    return stem[:60] or "series"


def export_stem(record: Mapping[str, Any], forms: Sequence[str]) -> str:
    """'algae_photobioreactor-Dry-weight-logistic_gompertz': source file, series and forms.

    Two files' exports never share a name, nor do two series of one file; many forms are counted
    ('logistic_gompertz_and-4-more') so that the name stays short.
    """
    data = record.get("data") or {}
    source = str(data.get("source") or "data").replace("\\", "/").rsplit("/", 1)[-1]
    source = source.rsplit(".", 1)[0] if "." in source.strip(".") else source
    names = [file_stem(m) for m in forms]
    joined = "_".join(names)
    if len(joined) > FORMS_IN_NAME and len(names) > 2:
        joined = f"{names[0]}_{names[1]}_and-{len(names) - 2}-more"
    return "-".join(file_stem(part) for part in (source, str(data.get("name", "series")), joined))


def view_options(scale: str | None = None, path_from: str | None = None, change_axis: str | None = None
                 ) -> dict[str, Any]:
    """How the screen draws the panels (state-axis scale, increments paths, panel 1's x axis): exports follow."""
    return {"scale": "log" if scale == "log" else "linear",
            "path_from": path_from if path_from in ("first", "last") else "none",
            "change_axis": "time" if change_axis == "time" else "state"}


def live_figures(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, settings: Mapping[str, Any],
                 capacity: float | None, view: Mapping[str, Any]) -> dict[str, Any]:
    """Panels 1 and 2 as the screen draws them, titled for a file; a panel with nothing to show is left out."""
    from .explore import explore_panels

    change, candidate, _readout = explore_panels(data, exclusions, settings, capacity, view["change_axis"],
                                                 view["scale"])
    out = {}
    for (_graph, name, title), fig in zip(LIVE_PANELS, (change, candidate), strict=True):
        if fig.get("data"):
            out[name] = export_view(fig, title)
    return out


def image_jobs(record: Mapping[str, Any], size: str, stem: str, *, view: Mapping[str, Any] | None = None,
               live: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """Every PNG the browser draws, each with its figure and size: the record's panels, the summary
    sheet (and its continuation pages) and the live panels. The count announced is ``len(images)``."""
    if size not in PANEL_SIZES:
        raise GrowthcoreInputError(f"image size must be one of {', '.join(PANEL_SIZES)}; got {size!r}")
    panel, sheet = PANEL_SIZES[size], SHEET_SIZES[size]

    def job(name: str, fig: Any, s: Any) -> dict[str, Any]:
        return {"filename": f"{stem}-{name}.png", "figure": fig, "width": s.width, "height": s.height,
                "scale": s.scale, "dpi": s.dpi, "pixels": list(s.pixels)}

    jobs = [job(name, fig, panel) for name, fig in panel_figures(record, view=view,
                                                                 size=(panel.width, panel.height)).items()]
    pages = summary_sheets(record, width=sheet.width, height=sheet.height, view=view)
    jobs += [job(SHEET if k == 0 else f"{SHEET}-{k + 1}", fig, sheet) for k, fig in enumerate(pages)]
    jobs += [job(name, fig, panel) for name, fig in (live or {}).items()]
    return {"size": size, "images": jobs}


def record_text(record: Mapping[str, Any]) -> str:
    """The record as ``growthcore fit --out`` writes it."""
    return json.dumps(record, indent=2, allow_nan=False) + "\n"


def on_export(n_clicks: int | None, data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
              settings: Mapping[str, Any] | None, capacity: float | None, forms: Sequence[str] | None,
              what: Sequence[str] | None, size: str | None, forecast_store: Mapping[str, Any] | None = None,
              boot_done: Mapping[str, Any] | None = None, scale: str | None = None, path_from: str | None = None,
              change_axis: str | None = None, *, created: _dt.datetime | None = None) -> tuple[Any, ...]:
    """Outputs: record download, CSV download, HTML download, image jobs for the browser, message.

    ``scale``, ``path_from`` and ``change_axis`` are the panels' view controls: figures follow them.
    """
    nothing = (no_update,) * 4
    if not n_clicks:
        return (*nothing, no_update)
    if data is None or settings is None:
        return (*nothing, _message("Nothing to export yet: load a data file first.", error=True))
    chosen = [m for m in (forms or []) if m in settings.get("models", [])]
    if not chosen:
        return (*nothing, _message("Choose at least one fitted form to export.", error=True))
    what = list(what or [])
    if not what:
        return (*nothing, _message("Choose at least one kind of file to export.", error=True))
    try:
        record = session_record(data, exclusions, settings, capacity, forms=chosen, created=created,
                                forecast_store=forecast_store, boot_done=boot_done)
        stem = export_stem(record, chosen)
        view = dict(view_options(scale, path_from, change_axis), models=list(settings.get("models", [])))
        images = no_update
        if "images" in what:
            live = live_figures(data, exclusions, settings, capacity, view)
            images = image_jobs(record, size or "screen", stem, view=view, live=live)
    except GrowthcoreInputError as exc:
        return (*nothing, _message(f"Not exported: {str(exc).splitlines()[0]}", error=True))
    files = []
    rec = csv = page = no_update
    if "record" in what:
        rec = {"content": record_text(record), "filename": f"{stem}-fit-record.json", "type": "application/json"}
        files.append(rec["filename"])
    if "table" in what:
        csv = {"content": residual_csv_text(record), "filename": f"{stem}-residuals.csv", "type": "text/csv"}
        files.append(csv["filename"])
    if "report" in what:
        page = {"content": report_html(record, view=view), "filename": f"{stem}-report.html", "type": "text/html"}
        files.append(page["filename"])
    n_fits = len(record["fits"])
    head = f"Exported {n_fits} fit{'s' if n_fits != 1 else ''} of {len(chosen)} form{'s' if len(chosen) != 1 else ''}"
    tail = f": {', '.join(files)}" if files else ""
    if images is not no_update:
        n_png = len(images["images"])
        tail += ("; " if files else ": ") + f"{n_png} PNG image{'s' if n_png != 1 else ''} ({size}) follow"
    digest = record["integrity"]["value"][:12]
    return (rec, csv, page, images, _message(f"{head}{tail}. Record SHA-256 {digest}…"))


def _message(text: str, *, error: bool = False) -> html.Div:
    if error:
        return html.Div(text, className="message message-error")
    return html.Div(text, className="message message-ok")


# --------------------------------------------------------------------------------------------
# Reopening


def _unique(items: Sequence[str]) -> list[str]:
    return list(dict.fromkeys(items))


def record_models(record: Mapping[str, Any]) -> list[str]:
    """The form ids a record fitted, in order."""
    settings = record.get("settings") or {}
    return list(settings.get("models") or _unique([f["model"] for f in record.get("fits") or []]))


def controls_from_record(record: Mapping[str, Any]) -> dict[str, Any]:
    """The model controls that make the app fit what the record holds.

    Records written by the command line name their methods and a fixed K (or none); a record of
    both methods opens with "both"; without a fixed K, K is fitted by every form.
    """
    settings = record.get("settings") or {}
    fits = record.get("fits") or []
    models = record_models(record)
    methods = list(settings.get("methods") or _unique([f["method"] for f in fits]))
    forms = _unique([m[: -len("+c")] if m.endswith("+c") else m for m in models])
    capacity = settings.get("capacity")
    estimate = settings.get("capacity_estimate")
    if estimate is None:
        estimate = capacity
    if estimate is None:  # a command-line record: K as the first fit that has one found it
        estimate = next((f["parameters"]["K"]["value"] for f in fits
                         if f.get("status") == "converged" and "K" in (f.get("parameters") or {})), None)
    return {
        "forms": forms,
        "constant": ["c"] if any(m.endswith("+c") for m in models) else [],
        "terms": "\n".join(str(t) for t in settings.get("terms") or []),
        "method": "both" if set(methods) >= {"increments", "trajectory"} else (methods[0] if methods else "increments"),
        "error": settings.get("error") if settings.get("error") in ("additive", "log") else "additive",
        "k_mode": "held" if capacity is not None else "fitted",
        "capacity": None if estimate is None else float(estimate),
    }


def stores_from_record(record: Mapping[str, Any], *, name: str = "record") -> tuple[dict[str, Any], dict[str, Any]]:
    """The data store and exclusions store of a checked record (see :func:`parse_record`)."""
    opened = reopen(record, name=name)
    series = opened.series
    report = opened.import_report
    plain = dataclasses.replace(series, excluded={})
    if report is not None:
        data = data_to_store(ImportResult(series=(plain,), report=report), plain, source=opened.source.source)
    else:  # a record of data entered directly: no file, no import report
        data = data_to_store_without_report(plain, opened.source)
    data["source"] = record["data"].get("source") or data["source"]
    excluded = {str(i): reason for i, reason in sorted(series.excluded.items())}
    exclusions = dict(empty_exclusions(data["key"]), excluded=excluded)
    return data, exclusions


def data_to_store_without_report(series: Series, source: DataSource) -> dict[str, Any]:
    from growthcore.io.report import ImportReport

    report = ImportReport.from_dict({"source": source.source or "record", "sha256": source.sha256, "format": "record",
                                     "layout": "record", "rows_read": len(series), "series": [], "left_out": [],
                                     "notes": ["data taken from a fit record"]})
    return data_to_store(ImportResult(series=(series,), report=report), series, source=source.source or "record")


def record_upload_chars(limits: Limits) -> int:
    """Base64 characters of the largest record a server with ``limits`` reopens: an upload beyond them is
    refused before decoding (the record size limit of ``growthcore fit --from-record``, which every
    accepted input stays under)."""
    return 4 * (limits.max_record_bytes // 3 + 1)


def decode_upload(contents: str, filename: str) -> bytes:
    """The record's bytes, refused above the answering server's record limit."""
    _, _, b64 = contents.partition(",")
    most = record_upload_chars(current_limits())
    if len(b64) > most:
        raise RecordError(filename, [f"is larger than {most * 3 // 4 // 1_000_000} MB; records that "
                                     "large are refused"])
    try:
        return base64.b64decode(b64, validate=True)
    except (binascii.Error, ValueError):
        raise RecordError(filename, ["arrived damaged (not valid base64); try again"]) from None


def refusal(exc: RecordError) -> html.Div:
    problems = exc.problems or (str(exc),)
    body: list[Any] = [html.Strong("Not reopened. "), f"{exc.name}: {problems[0]}"]
    if len(problems) > 1:
        body.append(html.Ul([html.Li(p) for p in problems[1:]]))
    body.append(html.Div("The session is unchanged.", className="muted"))
    return html.Div(body, className="message message-error record-refused")


def on_record_upload(contents: str | None, filename: str | None, *, run: Any = None) -> tuple[Any, ...]:
    """Outputs: source, data, exclusions, data summary, report text, series options, series value,
    the six model controls, the pending K, the forecast asked for, the data message and the record message.

    The data store carries panel 7's fields as the record's settings give them (``later``, set by
    app/callbacks/follow.py once the data are on the page)."""
    keep = (no_update,) * 16
    if not contents:
        return (*keep, no_update)
    name = filename or "record.json"
    try:
        raw = decode_upload(contents, name)
        record = run("reading the record", parse_record, raw, name=name) if run else parse_record(raw, name=name)
        data, exclusions = stores_from_record(record, name=name)
        controls = controls_from_record(record)
        later = steps_from_settings(record.get("settings") or {}, max_steps=step_limit(),
                                    max_resamples=resample_limit(current_limits()))
    except RecordError as exc:
        return (*keep, refusal(exc))
    except GrowthcoreInputError as exc:
        return (*keep, refusal(RecordError(name, [str(exc).splitlines()[0]])))
    n_fits = len(record["fits"])
    k = controls["capacity"]
    pending = {"key": data["key"], "value": k} if k is not None else None
    also = [m for m in expand_forms(controls["forms"], bool(controls["constant"])) if m not in record_models(record)]
    text = (f"Reopened {name}: series “{data['name']}”, {len(data['t'])} points, {len(exclusions['excluded'])} "
            f"excluded, {n_fits} fit{'s' if n_fits != 1 else ''} written {record.get('created', '')}. The panels "
            "are recomputed from the record's data and settings.")
    if also:
        text += f" The controls also fit {', '.join(also)}, which the record does not hold."
    if later["notes"]:
        text += " " + " ".join(later["notes"])
    data["later"] = later
    forecast = {"request": later["request"], "key": data["key"]} if later["request"] else None
    data_message = html.Div(f"Data from the fit record {name} (first read from {data['source']}).",
                            className="message message-ok")
    return (None, data, exclusions, summary(data), data["report_text"],
            [{"label": data["name"], "value": data["name"]}],
            data["name"], controls["forms"], controls["constant"], controls["terms"], controls["method"],
            controls["error"], controls["k_mode"], pending, forecast, data_message,
            html.Div(text, className="message message-ok"))


def register(app: Dash) -> None:
    app.clientside_callback(
        ClientsideFunction(namespace="growthcore_export", function_name="forms"),
        Output(ids.EXPORT_FORMS, "options"), Output(ids.EXPORT_FORMS, "value"),
        Input(ids.FITS, "data"), State(ids.EXPORT_FORMS, "value"), State(ids.EXPORT_FORMS, "options"),
    )
    app.callback(
        Output(ids.DOWNLOAD_RECORD, "data"), Output(ids.DOWNLOAD_CSV, "data"), Output(ids.DOWNLOAD_HTML, "data"),
        Output(ids.EXPORT_IMAGES, "data"), Output(ids.EXPORT_MESSAGE, "children"),
        Input(ids.EXPORT_BUTTON, "n_clicks"),
        State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"), State(ids.SETTINGS, "data"),
        State(ids.CAPACITY, "data"), State(ids.EXPORT_FORMS, "value"), State(ids.EXPORT_WHAT, "value"),
        State(ids.EXPORT_SIZE, "value"), State(ids.FORECAST, "data"), State(ids.BOOT_DONE, "data"),
        State(ids.STATE_SCALE, "value"), State(ids.PATH_FROM, "value"), State(ids.CHANGE_AXIS, "value"),
        prevent_initial_call=True, running=[(Output(ids.EXPORT_BUTTON, "disabled"), True, False)],
    )(on_export)
    app.clientside_callback(
        ClientsideFunction(namespace="growthcore_export", function_name="images"),
        Output(ids.EXPORT_IMAGE_MESSAGE, "children"), Input(ids.EXPORT_IMAGES, "data"),
        prevent_initial_call=True,
    )
    app.callback(
        Output(ids.SOURCE, "data", allow_duplicate=True), Output(ids.DATA, "data", allow_duplicate=True),
        Output(ids.EXCLUSIONS, "data", allow_duplicate=True),
        Output(ids.DATA_SUMMARY, "children", allow_duplicate=True),
        Output(ids.REPORT, "children", allow_duplicate=True),
        Output(ids.SERIES_PICK, "options", allow_duplicate=True),
        Output(ids.SERIES_PICK, "value", allow_duplicate=True),
        Output(ids.FORMS, "value"), Output(ids.CONSTANT, "value"), Output(ids.TERMS, "value"),
        Output(ids.METHOD, "value"), Output(ids.ERROR, "value"), Output(ids.K_MODE, "value"),
        Output(ids.PENDING_CAPACITY, "data", allow_duplicate=True),
        Output(ids.FORECAST, "data", allow_duplicate=True),
        Output(ids.DATA_MESSAGE, "children", allow_duplicate=True),
        Output(ids.RECORD_MESSAGE, "children"),
        Input(ids.RECORD_UPLOAD, "contents"), State(ids.RECORD_UPLOAD, "filename"),
        prevent_initial_call=True,
    )(lambda contents, filename: on_record_upload(contents, filename, run=runner_of(app)))
