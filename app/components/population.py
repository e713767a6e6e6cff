"""The population panel of the many-series section: one mixed-effects fit over the replicate series."""

from __future__ import annotations

from dash import dcc, html

from growthcore.models.curves import CURVE_FORMS

from .. import ids
from .panels import GRAPH_CONFIG

DEFAULT_FORM = "logistic-mid-curve"


def _choice(label: str, component_id: str, control: object) -> html.Div:
    return html.Div([html.Label(label, htmlFor=component_id, className="field-label"), control],
                    className="batch-field")


def population_box() -> html.Div:
    """Choices of the model, the fit's numbers, its curves, the forest plot and the likelihood-ratio test."""
    forms = [{"label": f.id, "value": f.id} for f in CURVE_FORMS]
    return html.Div([
        dcc.Store(id=ids.POP_STORE, storage_type="memory"),
        html.H4("Replicates as one population", className="panel-subtitle"),
        html.P("A nonlinear mixed-effects fit over the series of the file: each constant is a population value, "
               "plus a deviation per series for the constants you mark as random (Lindstrom–Bates alternation; "
               "under ML refined by the Laplace approximation). Conditions are the replicate groups; a shifted "
               "constant gets its own value per condition. The error model is the one chosen in the Model section.",
               className="panel-guide"),
        html.Div([
            _choice("Curve", ids.POP_FORM, dcc.Dropdown(id=ids.POP_FORM, options=forms, value=DEFAULT_FORM,
                                                          clearable=False, className="dropdown")),
            _choice("Random per series", ids.POP_RANDOM,
                    dcc.Checklist(id=ids.POP_RANDOM, options=[], value=["K"], inline=True,
                                  inputClassName="check", labelClassName="check-label")),
            _choice("Deviations", ids.POP_COVARIANCE,
                    dcc.RadioItems(id=ids.POP_COVARIANCE, options=[{"label": "independent", "value": "diagonal"},
                                                                   {"label": "correlated", "value": "full"}],
                                   value="diagonal", inline=True, inputClassName="check",
                                   labelClassName="check-label")),
            _choice("Estimation", ids.POP_ESTIMATION,
                    dcc.RadioItems(id=ids.POP_ESTIMATION, options=["ML", "REML"], value="ML", inline=True,
                                   inputClassName="check", labelClassName="check-label")),
            _choice("Shifted by condition", ids.POP_SHIFT,
                    dcc.Checklist(id=ids.POP_SHIFT, options=[], value=[], inline=True,
                                  inputClassName="check", labelClassName="check-label")),
        ], className="batch-row"),
        html.Div([
            html.Button("Fit the population", id=ids.POP_RUN, n_clicks=0, className="button", type="button"),
            dcc.Loading(html.Span(id=ids.POP_STATUS, className="batch-status", role="status",
                                  **{"aria-live": "polite"}), type="dot"),
        ], className="batch-controls"),
        html.Div(id=ids.POP_TABLE),
        dcc.Graph(id=ids.POP_CURVES, config=GRAPH_CONFIG, figure={"data": [], "layout": {}}),
        html.Div([
            _choice("Forest plot of", ids.POP_FOREST_CONSTANT,
                    dcc.Dropdown(id=ids.POP_FOREST_CONSTANT, options=[], value=None, clearable=False,
                                 className="dropdown")),
        ], className="batch-row"),
        dcc.Graph(id=ids.POP_FOREST, config=GRAPH_CONFIG, figure={"data": [], "layout": {}}),
        html.Div([
            html.Span("Compare with a model where random are", className="field-label"),
            dcc.Checklist(id=ids.POP_LR_RANDOM, options=[], value=[], inline=True,
                          inputClassName="check", labelClassName="check-label"),
            html.Span("and shifted are", className="field-label"),
            dcc.Checklist(id=ids.POP_LR_SHIFT, options=[], value=[], inline=True,
                          inputClassName="check", labelClassName="check-label"),
            html.Button("Run the likelihood-ratio test", id=ids.POP_LR_RUN, n_clicks=0, className="button",
                        type="button"),
        ], className="batch-row batch-ftest"),
        dcc.Loading(html.Div(id=ids.POP_LR_RESULT, role="status", **{"aria-live": "polite"}), type="dot"),
    ], id=ids.POP_BOX, className="batch-tables population-box")
