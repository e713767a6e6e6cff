"""The data section: upload, series picker, column mapping, and the import report."""

from __future__ import annotations

from dash import dcc, html

from growthcore.io.loader import TIME_UNITS

from .. import ids
from .series import picker

#: The replicate rules as the page offers them.
REPLICATE_CHOICES = (
    ("all", "keep every point (increments use the mean at each time)"),
    ("mean", "the mean at each time"),
    ("first", "the first at each time only"),
)


def data_section(max_upload_bytes: int) -> html.Section:
    limit_mb = max_upload_bytes / 1_000_000
    browser_limit = 2 * max_upload_bytes
    return html.Section([
        html.H2("Data", className="section-title"),
        html.Div(dcc.Upload(
            id=ids.UPLOAD,
            children=html.Div([
                html.Span("Drop a CSV, TSV or XLSX file here, or "),
                html.Button("choose a file", className="link-button", type="button", tabIndex="-1"),
                html.Div(f"up to {limit_mb:g} MB; the file stays in this browser tab", className="hint"),
            ]),
            className="upload", className_active="upload upload-active", className_reject="upload upload-reject",
            # up to twice the limit reaches the server, which names the file and the limit in its
            # message; larger files the browser refuses, and assets/upload_guard.js says so
            max_size=browser_limit, multiple=False,
            accept=".csv,.tsv,.txt,.xlsx,text/csv,text/tab-separated-values,"
                   "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        ), **{"data-upload-limit": str(browser_limit), "data-refused-store": ids.UPLOAD_REFUSED}),
        dcc.Store(id=ids.UPLOAD_REFUSED),
        html.Div(id=ids.DATA_MESSAGE, role="status", **{"aria-live": "polite"}),
        html.Div(id=ids.DATA_SUMMARY, className="data-summary"),
        html.Label("Series", htmlFor=ids.SERIES_PICK, className="field-label"),
        dcc.Dropdown(id=ids.SERIES_PICK, options=[], value=None, clearable=False, searchable=True,
                     className="dropdown"),
        html.Div(picker(), id=ids.SERIES_SLOT),
        html.Details([
            html.Summary("Columns and units (override what the import guessed)"),
            html.Datalist(id=ids.MAP_COLUMNS),
            _field("Time column", dcc.Input(id=ids.MAP_TIME, type="text", list=ids.MAP_COLUMNS, debounce=True,
                                            placeholder="as guessed")),
            _field("Value column(s)", dcc.Input(id=ids.MAP_VALUE, type="text", list=ids.MAP_COLUMNS, debounce=True,
                                                placeholder="as guessed")),
            _field("Series id column(s)", dcc.Input(id=ids.MAP_SERIES, type="text", list=ids.MAP_COLUMNS,
                                                    debounce=True, placeholder="read from the file")),
            _field("Time unit (plain numbers, clock times, dates)", dcc.Dropdown(
                id=ids.MAP_TIME_UNIT, options=[{"label": u, "value": u} for u in TIME_UNITS], value=None,
                placeholder="as guessed", className="dropdown")),
            _field("Repeated times within a series (replicates)", dcc.Dropdown(
                id=ids.MAP_REPLICATES, options=[{"label": text, "value": rule} for rule, text in REPLICATE_CHOICES],
                value="all", clearable=False, className="dropdown")),
            _field("Worksheet (XLSX)", dcc.Input(id=ids.MAP_SHEET, type="text", debounce=True,
                                                 placeholder="first with data")),
            html.Button("Read the file again with these choices", id=ids.MAP_APPLY, n_clicks=0,
                        className="button", type="button"),
        ], className="mapping"),
        html.Details([
            html.Summary("Import report: what was read and what was left out"),
            html.Pre(id=ids.REPORT, className="report"),
        ], className="report-box", open=False),
    ], className="section", **{"aria-label": "Data"})


def _field(label: str, control: object) -> html.Div:
    return html.Div([html.Label(label, className="field-label"), control], className="field")
