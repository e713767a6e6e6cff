"""The six linked panels, each a card with a title, a one-line reading guide and its graph."""

from __future__ import annotations

from typing import Any

from dash import dcc, html

from .. import ids

GRAPH_CONFIG: dict[str, Any] = {
    "displaylogo": False,
    "modeBarButtonsToRemove": ["lasso2d", "select2d", "autoScale2d", "zoomIn2d", "zoomOut2d"],
    "toImageButtonOptions": {"format": "png", "scale": 2},
    "responsive": True,
}


def _graph(graph_id: str, height: int = 300, **config: Any) -> dcc.Graph:
    return dcc.Graph(id=graph_id, config={**GRAPH_CONFIG, **config}, clear_on_unhover=True, className="graph",
                     style={"height": f"{height}px"}, figure={"data": [], "layout": {}})


def _card(number: int, title: str, guide: str, body: list[Any], extra_class: str = "") -> html.Article:
    return html.Article([
        html.Header([html.Span(str(number), className="panel-number"), html.H3(title, className="panel-title")],
                        className="panel-head"),
        html.P(guide, className="panel-guide"),
        *body,
    ], className=f"panel {extra_class}".strip(), **{"aria-label": title})


def view_bar() -> html.Div:
    """The one key of the chosen forms and the scale of the state axes, above the panels."""
    return html.Div([
        html.Div([html.Span("Key", className="key-title"),
                  html.Div(id=ids.FORM_KEY, className="form-key", role="list")], className="key-box",
                 **{"aria-label": "Key of the chosen forms"}),
        html.Div([
            html.Span("State axes", className="key-title"),
            dcc.RadioItems(id=ids.STATE_SCALE, options=[{"label": "linear", "value": "linear"},
                                                        {"label": "log", "value": "log"}],
                           value="linear", inline=True, className="axis-toggle", inputClassName="check",
                           labelClassName="check-label"),
        ], className="scale-box", role="group", **{"aria-label": "Scale of the state axes"}),
    ], className="view-bar")


def panels_section() -> html.Section:
    return html.Section([
        view_bar(),
        _card(1, "Change against state",
              "Change per unit time over each step, against the state at its start.",
              [dcc.RadioItems(id=ids.CHANGE_AXIS, options=[{"label": "against state p", "value": "state"},
                                                           {"label": "against time", "value": "time"}],
                              value="state", inline=True, className="axis-toggle", inputClassName="check",
                              labelClassName="check-label"),
               _graph(ids.G_CHANGE)]),
        _card(2, "Change against candidate terms",
              "Δp per step against each candidate term g(p; K), regressed through the origin.",
              [_graph(ids.G_CANDIDATE), html.Div(id=ids.CANDIDATE_SUMMARY, className="readout",
                                                 role="status", **{"aria-live": "polite"})]),
        _card(3, "Trajectory",
              "Observations and every fit as it fits them; drag the handle at the right end of the dashed "
              "K line to change the estimate.",
              [html.Div([
                  html.Label("Increments fits:", htmlFor=ids.PATH_FROM, className="inline-label"),
                  dcc.Dropdown(id=ids.PATH_FROM, options=[
                      {"label": "one step ahead only", "value": "none"},
                      {"label": "+ map iterated from the first observation", "value": "first"},
                      {"label": "+ map iterated from the last observation", "value": "last"}],
                      value="none", clearable=False, searchable=False, className="path-pick")],
                  className="path-row"),
               _graph(ids.G_TRAJECTORY, 320, edits={"shapePosition": True}),
               html.Div(id=ids.TRAJECTORY_NOTE, className="hint")]),
        _card(4, "Observed against predicted",
              "Points on the dotted 1:1 line are predicted exactly; increments predict one step ahead.",
              [_graph(ids.G_OBS_PRED)]),
        _card(5, "Residuals",
              "Observed minus fitted, in time order and against the fitted value; look for runs and funnels.",
              [html.Div(id=ids.MISFIT_FLAG, role="status", **{"aria-live": "polite"}),
               html.Div([_graph(ids.G_RESID_TIME), _graph(ids.G_RESID_FITTED)], className="pair")],
              "panel-wide"),
    ], className="panels", **{"aria-label": "Linked panels"})
