"""Many series in one file: the picker in the data section and the overview section of the main column.

Both stay hidden until a file with two or more series is read.
"""

from __future__ import annotations

from dash import dcc, html

from .. import ids
from .panels import GRAPH_CONFIG
from .population import population_box

GROUP_MODES = (
    ("none", "none"),
    ("pattern", "from a pattern on the ids"),
    ("column", "from condition columns"),
)
ALL_GROUPS = "__all__"
#: Milliseconds between the end of one chunk and the start of the next.
TICK_MS = 60


def stores() -> list[dcc.Store | dcc.Interval]:
    """The session state of the batch view; the server keeps none of it."""
    return [
        dcc.Store(id=ids.BATCH_SERIES, storage_type="memory"),
        dcc.Store(id=ids.BATCH_GROUPS, storage_type="memory"),
        dcc.Store(id=ids.BATCH_JOB, storage_type="memory"),
        dcc.Store(id=ids.BATCH_FITS, storage_type="memory"),
        dcc.Store(id=ids.BATCH_PROGRESS, storage_type="memory"),
        dcc.Store(id=ids.BATCH_CANCEL, storage_type="memory"),
        dcc.Store(id=ids.GRID_VIEW, storage_type="memory"),
        # one chunk per tick; each finished chunk allows exactly one more tick (max_intervals), so
        # chunks never overlap however long one takes
        dcc.Interval(id=ids.BATCH_TICK, interval=TICK_MS, n_intervals=0, max_intervals=0, disabled=True),
    ]


def picker() -> html.Div:
    """Replicate groups, a group filter and previous/next through the series of the chosen group."""
    return html.Div([
        *stores(),
        html.Div([
            html.Button("◀ previous", id=ids.SERIES_PREV, n_clicks=0, className="button button-small", type="button",
                        title="The previous series of the chosen group"),
            html.Span(id=ids.SERIES_POSITION, className="series-position", role="status", **{"aria-live": "polite"}),
            html.Button("next ▶", id=ids.SERIES_NEXT, n_clicks=0, className="button button-small", type="button",
                        title="The next series of the chosen group"),
        ], className="series-steps"),
        html.Label("Show group", htmlFor=ids.GROUP_FILTER, className="field-label"),
        dcc.Dropdown(id=ids.GROUP_FILTER, options=[{"label": "all series", "value": ALL_GROUPS}], value=ALL_GROUPS,
                     clearable=False, searchable=False, className="dropdown"),
        html.Details([
            html.Summary("Replicate groups"),
            dcc.RadioItems(id=ids.GROUP_MODE, options=[{"label": t, "value": v} for v, t in GROUP_MODES],
                           value="none", inputClassName="check", labelClassName="check-label"),
            html.Label("Pattern, or condition column(s)", htmlFor=ids.GROUP_TEXT, className="field-label"),
            dcc.Input(id=ids.GROUP_TEXT, type="text", debounce=True, className="series-group-text",
                      placeholder=r"e.g. ^([A-H]) or Year, Variety"),
            html.Div(id=ids.GROUP_MESSAGE, className="hint", role="status", **{"aria-live": "polite"}),
        ], className="series-groups"),
        html.A("Overview of every series ↓", href=f"#{ids.SERIES_OVERVIEW}", className="series-jump"),
    ], id=ids.PICKER_BOX, className="series-picker", hidden=True)


def overview_section() -> html.Section:
    """Fit every series in chunks, then the small multiples and (for plate wells) the plate map."""
    return html.Section([
        html.Header([html.Span("▦", className="panel-number"),
                     html.H3("Every series of the file", className="panel-title")], className="panel-head"),
        html.P("Each series is fitted on its own with the forms, method and error model chosen in the Model "
               "section; K is fitted by every form (a single K held for every series would not suit them). "
               "Points left out by hand apply to the panels above only. Click a series to open it in the panels. "
               "With noisy readings the trajectory method follows each path more closely than increments, whose "
               "one-step changes carry the noise of both readings.",
               className="panel-guide"),
        html.Div([
            html.Button("Fit every series", id=ids.BATCH_RUN, n_clicks=0, className="button", type="button"),
            html.Button("Stop", id=ids.BATCH_STOP, n_clicks=0, className="button", type="button", disabled=True),
            html.Progress(id=ids.BATCH_BAR, value="0", max="1", className="batch-bar"),
            html.Span(id=ids.BATCH_STATUS, className="batch-status", role="status", **{"aria-live": "polite"}),
        ], className="batch-controls"),
        html.Div([
            html.Div([html.Label("Fitted form shown", htmlFor=ids.BATCH_FORM, className="field-label"),
                      dcc.Dropdown(id=ids.BATCH_FORM, options=[], value=None, clearable=False,
                                   placeholder="fit the series first", className="dropdown")], className="batch-field"),
            html.Div([html.Label("Page", htmlFor=ids.GRID_PAGE, className="field-label"),
                      dcc.Dropdown(id=ids.GRID_PAGE, options=[{"label": "all", "value": 0}], value=0,
                                   clearable=False, searchable=False, className="dropdown")],
                     className="batch-field batch-field-small"),
        ], className="batch-row"),
        dcc.Graph(id=ids.GRID, config={**GRAPH_CONFIG, "displayModeBar": False}, className="batch-grid",
                  figure={"data": [], "layout": {}}),
        html.Div(id=ids.BATCH_FAILED, className="batch-failed"),
        html.Div([
            html.Div([html.Label("Colour the wells by", htmlFor=ids.PLATE_QUANTITY, className="field-label"),
                      dcc.Dropdown(id=ids.PLATE_QUANTITY, options=[], value=None, clearable=False,
                                   placeholder="fit the series first", className="dropdown")], className="batch-field"),
            dcc.Graph(id=ids.PLATE, config=GRAPH_CONFIG, className="batch-plate", figure={"data": [], "layout": {}}),
        ], id=ids.PLATE_BOX, hidden=True),
        tables_box(),
        population_box(),
    ], id=ids.SERIES_OVERVIEW, className="panel batch-panel", hidden=True, **{"aria-label": "Every series"})


def tables_box() -> html.Div:
    """The run's table as CSV, group means of the shown form, and the F test between groups."""
    return html.Div([
        html.Div([
            html.Button("Download the table (CSV)", id=ids.BATCH_TABLE_BUTTON, n_clicks=0, className="button",
                        type="button"),
            html.Span("one row per series and fitted form: status, message, every constant and metric",
                      className="hint"),
            dcc.Download(id=ids.BATCH_DOWNLOAD),
        ], className="batch-row"),
        html.Div(id=ids.GROUP_SUMMARY),
        html.Div([
            html.Label("Do the groups differ in", htmlFor=ids.FTEST_CONSTANT, className="field-label"),
            dcc.Dropdown(id=ids.FTEST_CONSTANT, options=[], value=None, clearable=False, className="dropdown"),
            html.Button("Run the F test", id=ids.FTEST_RUN, n_clicks=0, className="button", type="button"),
        ], className="batch-row batch-ftest"),
        dcc.Loading(html.Div(id=ids.FTEST_RESULT, role="status", **{"aria-live": "polite"}), type="dot"),
    ], id=ids.BATCH_TABLES, className="batch-tables", hidden=True)
