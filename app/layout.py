"""The page: header with the caution, the control column, the panels and the comparison table."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import dcc, html

from . import ids
from .components.data_panel import data_section
from .components.dynamics import dynamics_section
from .components.exclusions import exclusions_section
from .components.export import export_section
from .components.model_panel import model_section
from .components.panels import panels_section
from .components.series import overview_section

CAUTION = (
    "Forecasts and derived times from a fitted growth law are unreliable outside the observed range of "
    "time and state. Where they could steer a decision on food safety, pathogen growth, harvest quotas or "
    "public health, use validated methods and defer to local regulations and qualified professionals."
)


def build_layout(source: Mapping[str, Any] | None, *, max_upload_bytes: int) -> html.Div:
    """The whole page; ``source`` is the file shown first (name and base64 bytes), or None."""
    return html.Div([
        dcc.Store(id=ids.SOURCE, storage_type="memory", data=dict(source) if source else None),
        dcc.Store(id=ids.DATA, storage_type="memory"),
        dcc.Store(id=ids.EXCLUSIONS, storage_type="memory", data={"key": None, "excluded": {}, "history": []}),
        dcc.Store(id=ids.CAPACITY, storage_type="memory"),
        dcc.Store(id=ids.CAPACITY_DATA, storage_type="memory"),
        dcc.Store(id=ids.SETTINGS, storage_type="memory"),
        dcc.Store(id=ids.FITS, storage_type="memory"),
        dcc.Store(id=ids.PREVIEW, storage_type="memory"),
        dcc.Store(id=ids.K_DROP, storage_type="memory"),
        dcc.Store(id=ids.DYN_VISIBLE, storage_type="memory", data=False),
        dcc.Store(id=ids.DYN_STALE, storage_type="memory", data=False),
        dcc.Store(id=ids.DYN_DRAW, storage_type="memory"),
        dcc.Store(id=ids.SORT, storage_type="memory", data={"column": None, "descending": False}),
        dcc.Store(id=ids.HIGHLIGHT, storage_type="memory"),
        html.A("Skip to the panels", href="#main", className="skip-link"),
        html.Header([
            html.Div([
                html.H1("growthcore", className="brand"),
                html.Span("rate-law exploration", className="brand-sub"),
            ], className="brand-box"),
            html.P([html.Strong("Caution. "), CAUTION], className="caution", role="note"),
        ], className="topbar"),
        html.Div([
            html.Span(id=ids.ERROR_TEXT),
            html.Button("Dismiss", id=ids.ERROR_DISMISS, n_clicks=0, className="button button-small", type="button"),
        ], id=ids.ERROR_BANNER, role="alert", className="error-banner", hidden=True),
        html.Div([
            html.Aside([data_section(max_upload_bytes), model_section(), exclusions_section()],
                       className="sidebar", **{"aria-label": "Data and model controls"}),
            html.Main([
                panels_section(),
                html.Section([
                    html.Header([html.Span("6", className="panel-number"),
                                 html.H3("Comparison of the chosen forms", className="panel-title")],
                                className="panel-head"),
                    html.P("Sort by any numeric column. ΔAICc and Akaike weights compare only fits of the same "
                           "points by the same method and error model.", className="panel-guide"),
                    html.Div(id=ids.COMPARISON_NOTES, className="hint"),
                    # while a refit is on its way the table stays readable, dimmed, under the spinner
                    dcc.Loading(html.Div(id=ids.COMPARISON, className="table-box"), type="dot", delay_show=400,
                                overlay_style={"visibility": "visible", "opacity": 0.55}),
                ], className="panel panel-table", **{"aria-label": "Comparison"}),
                overview_section(),
                html.Div(dynamics_section(), id=ids.DYNAMICS_SLOT),
                html.Div(export_section(), id=ids.EXPORT_SLOT),
            ], id=ids.MAIN, className="main"),
        ], className="workspace"),
    ], className="page")
