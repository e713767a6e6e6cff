"""The export section: which forms and files, the image size, one export button, and reopening a record."""

from __future__ import annotations

from dash import dcc, html

from growthcore.report.images import PANEL_SIZES, SHEET_SIZES

from .. import ids

FILES = (
    ("record", "fit record (JSON)"),
    ("images", "PNG of each panel and the summary sheet"),
    ("table", "residual table (CSV)"),
    ("report", "report page (HTML, opens with no server)"),
)


def size_label(name: str) -> str:
    """'slide: panels 1920 × 1080 px, sheet 1920 × 1080 px' from the shared size presets."""
    panel, sheet = PANEL_SIZES[name], SHEET_SIZES[name]
    (pw, ph), (sw, sh) = panel.pixels, sheet.pixels
    dpi = f" at {panel.dpi} dpi" if panel.dpi else ""
    return f"{name}: panels {pw} × {ph} px, sheet {sw} × {sh} px{dpi}"


def export_section() -> html.Section:
    return html.Section([
        dcc.Store(id=ids.EXPORT_IMAGES, storage_type="memory"),
        dcc.Store(id=ids.PENDING_CAPACITY, storage_type="memory"),
        dcc.Download(id=ids.DOWNLOAD_RECORD),
        dcc.Download(id=ids.DOWNLOAD_CSV),
        dcc.Download(id=ids.DOWNLOAD_HTML),
        html.Header([html.Span("8", className="panel-number"),
                     html.H3("Export and reopen", className="panel-title")], className="panel-head"),
        html.P("Save the chosen fits as a fit record that reopens here or in `growthcore fit --from-record`, "
               "with figures, the residual table and a report page. The browser may ask once to allow "
               "several downloads.", className="panel-guide"),
        html.Div([
            html.Fieldset([
                html.Legend("Forms"),
                dcc.Checklist(id=ids.EXPORT_FORMS, options=[], value=[], className="forms",
                              inputClassName="check", labelClassName="check-label"),
            ], className="fieldset"),
            html.Fieldset([
                html.Legend("Files"),
                dcc.Checklist(id=ids.EXPORT_WHAT, options=[{"label": t, "value": v} for v, t in FILES],
                              value=[v for v, _ in FILES], className="forms", inputClassName="check",
                              labelClassName="check-label"),
            ], className="fieldset"),
            html.Fieldset([
                html.Legend("Image size"),
                dcc.RadioItems(id=ids.EXPORT_SIZE, options=[{"label": size_label(n), "value": n} for n in PANEL_SIZES],
                               value="screen", inputClassName="check", labelClassName="check-label"),
            ], className="fieldset"),
        ], className="export-grid", style={"display": "flex", "flexWrap": "wrap", "columnGap": "28px"}),
        html.Div([
            html.Button("Export the chosen forms", id=ids.EXPORT_BUTTON, n_clicks=0, className="button",
                        type="button"),
        ], className="button-row"),
        html.Div(id=ids.EXPORT_MESSAGE, role="status", **{"aria-live": "polite"}),
        html.Div(id=ids.EXPORT_IMAGE_MESSAGE, role="status", **{"aria-live": "polite"}),
        html.H4("Reopen a fit record", className="field-label"),
        dcc.Upload(
            id=ids.RECORD_UPLOAD,
            children=html.Div([html.Span("Drop a fit record (JSON) here, or "),
                               html.Button("choose a record", className="link-button", type="button", tabIndex="-1"),
                               html.Div("restores its data, forms, settings, exclusions and K", className="hint")]),
            className="upload", className_active="upload upload-active", accept=".json,application/json",
            multiple=False,
        ),
        html.Div(id=ids.RECORD_MESSAGE, role="status", **{"aria-live": "polite"}),
    ], className="panel panel-export", **{"aria-label": "Export and reopen"})
