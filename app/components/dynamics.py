"""Panel 7: what the chosen fit implies — long run, equilibria, cobweb, sweep, bootstrap intervals,
derived times and the forecast with its band (drawn on the trajectory panel)."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from dash import dcc, html

from growthcore.timeaxis import is_time_point
from growthcore.uncertainty import DEFAULT_RESAMPLES, DEFAULT_SEED, FORECAST_CAUTION

from .. import ids
from .panels import GRAPH_CONFIG

#: Upper limit of resamples one run may ask for (the refits travel through the browser store).
MAX_RESAMPLES = 10_000
#: The fewest resamples panel 7 runs.
MIN_RESAMPLES = 20
#: Pause between one chunk's answer and the next request (ms); the next chunk waits for the answer.
TICK_MS = 30

#: Derived quantities shown, in this order: key of growthcore.uncertainty.derived_intervals, label, unit kind.
DERIVED_ROWS: tuple[tuple[str, str, str], ...] = (
    ("doubling_time", "Doubling time at the starting level", "time"),
    ("lag_time", "End of the lag phase (tangent at the inflection meets the starting level)", "time"),
    ("inflection_time", "Moment of the inflection (fastest growth)", "time"),
    ("inflection_state", "State at the inflection", "state"),
    ("max_rate", "Largest change per unit time", "rate"),
    ("growth_factor_per_step", "Growth factor per step at the starting level", ""),
    ("specific_rate_at_start", "Specific rate at the start", "per-time"),
)


def fmt(x: float | None, digits: int = 4) -> str:
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return "–"
    return f"{x:.{digits}g}"


def interval_text(ci: Sequence[float | None] | None) -> str:
    if not ci or any(v is None for v in ci):
        return "–"
    return f"{fmt(ci[0])} to {fmt(ci[1])}"


def _graph(graph_id: str, height: int = 300) -> dcc.Graph:
    return dcc.Graph(id=graph_id, config=GRAPH_CONFIG, className="graph", style={"height": f"{height}px"},
                     figure={"data": [], "layout": {}})


#: Layout of this panel's own pieces (inline, so the shared stylesheet stays as it is).
ROW = {"display": "flex", "flexWrap": "wrap", "alignItems": "flex-end", "gap": "8px 16px", "margin": "6px 0"}
FIELD = {"display": "flex", "flexDirection": "column", "gap": "2px"}
BLOCK = {"marginTop": "14px"}
INPUT = {"width": "160px", "font": "inherit", "padding": "4px 6px", "border": "1px solid #c9d1d6",
         "borderRadius": "4px"}
TABLE = {"width": "auto", "minWidth": "min(100%, 640px)"}
CAUTION_STYLE = {"margin": "8px 0", "padding": "6px 10px", "fontSize": "12.5px", "borderLeft": "3px solid #D55E00",
                 "background": "#fbf1ea"}


def _field(label: str, control: Any, control_id: str) -> html.Div:
    return html.Div([html.Label(label, htmlFor=control_id, className="field-label"), control], className="dyn-field",
                    style=FIELD)


def dynamics_section() -> html.Section:
    """The panel with its own stores and the timer that drives the bootstrap chunk by chunk."""
    return html.Section([
        dcc.Store(id=ids.BOOT, storage_type="memory"),
        dcc.Store(id=ids.BOOT_DONE, storage_type="memory", data={}),
        dcc.Store(id=ids.BOOT_SUMMARY, storage_type="memory", data={}),
        dcc.Store(id=ids.FORECAST, storage_type="memory"),
        dcc.Interval(id=ids.BOOT_TICK, interval=TICK_MS, n_intervals=0, max_intervals=0),
        html.Header([html.Span("7", className="panel-number"),
                     html.H3("What the fitted model implies", className="panel-title")], className="panel-head"),
        html.P("Long-run behaviour, equilibria and their stability, bootstrap intervals, derived times and a "
               "forecast for one fitted form at a time.", className="panel-guide"),
        html.Div([
            _field("Fitted form", dcc.Dropdown(id=ids.DYN_FIT, options=[], value=None, clearable=False,
                                               searchable=False, className="dyn-pick", style={"minWidth": "320px"}),
                   ids.DYN_FIT),
        ], className="dyn-controls", style=ROW),
        html.Div(id=ids.DYN_SENTENCES, className="dyn-sentences", role="status", **{"aria-live": "polite"}),
        html.Div([
            html.Div([html.H4("Equilibria", className="dyn-subtitle"),
                      html.Div(id=ids.DYN_EQUILIBRIA, className="table-box")], className="dyn-block", style=BLOCK),
        ], className="dyn-row"),
        html.Div([
            html.Figure([_graph(ids.G_COBWEB), html.Figcaption(
                "Cobweb: the fitted map against the line of no change; the dashed staircase follows the model "
                "from the starting level. Filled circles are stable equilibria (|f'(p*)| < 1), open ones unstable.",
                className="hint")], className="dyn-figure"),
            html.Figure([_graph(ids.G_SWEEP), html.Figcaption(
                "Sweep: long-run states for each value of the rate, the other constants held at their estimates. "
                "The line marks the fitted rate, the shading its 95% interval (bootstrap when run, else t-based).",
                className="hint")], className="dyn-figure"),
        ], className="pair"),
        html.Div([
            html.H4("Bootstrap by residual resampling", className="dyn-subtitle"),
            html.Div([
                _field("Resamples", dcc.Input(id=ids.BOOT_N, type="number", value=DEFAULT_RESAMPLES, min=MIN_RESAMPLES,
                                              max=MAX_RESAMPLES, step=1, style=INPUT), ids.BOOT_N),
                _field("Seed", dcc.Input(id=ids.BOOT_SEED, type="number", value=DEFAULT_SEED, min=0, step=1,
                                         style=INPUT), ids.BOOT_SEED),
                html.Button("Run bootstrap", id=ids.BOOT_RUN, n_clicks=0, className="button", type="button"),
                html.Button("Cancel", id=ids.BOOT_CANCEL, n_clicks=0, className="button button-small", type="button"),
            ], className="dyn-controls", style=ROW),
            html.Progress(id=ids.BOOT_PROGRESS, value="0", max=str(DEFAULT_RESAMPLES), className="dyn-progress",
                          style={"width": "100%", "maxWidth": "480px", "height": "14px"},
                          **{"aria-label": "bootstrap progress"}),
            html.Div(id=ids.BOOT_STATUS, className="hint", role="status", **{"aria-live": "polite"}),
            html.Div(id=ids.DYN_INTERVALS, className="table-box"),
        ], className="dyn-block", style=BLOCK),
        html.Div([
            html.H4("Derived times", className="dyn-subtitle"),
            _field("Time to reach the level", dcc.Input(id=ids.DYN_LEVEL, type="number", debounce=True, min=0,
                                                        step="any", style=INPUT,
                                                        placeholder="state"), ids.DYN_LEVEL),
            html.Div(id=ids.DYN_DERIVED, className="table-box"),
        ], className="dyn-block", style=BLOCK),
        html.Div([
            html.H4("Forecast", className="dyn-subtitle"),
            html.Div([
                dcc.RadioItems(id=ids.FC_MODE, options=[{"label": "steps ahead", "value": "steps"},
                                                        {"label": "time span ahead", "value": "span"}],
                               value="steps", inline=True, inputClassName="check", labelClassName="check-label"),
                _field("How far", dcc.Input(id=ids.FC_AMOUNT, type="number", value=10, min=0, step="any",
                                            style=INPUT), ids.FC_AMOUNT),
                _field("Plausibility bound (optional)", dcc.Input(id=ids.FC_BOUND, type="number", min=0, step="any",
                                                                  style=INPUT, placeholder="state"),
                       ids.FC_BOUND),
                html.Button("Draw forecast", id=ids.FC_RUN, n_clicks=0, className="button", type="button"),
                html.Button("Remove", id=ids.FC_CLEAR, n_clicks=0, className="button button-small", type="button"),
            ], className="dyn-controls", style=ROW),
            html.P([html.Strong("Caution. "), FORECAST_CAUTION], className="dyn-caution", role="note",
                   style=CAUTION_STYLE),
            html.Div(id=ids.FC_NOTES, role="status", **{"aria-live": "polite"}),
        ], className="dyn-block", style=BLOCK),
    ], className="panel panel-table panel-dynamics", **{"aria-label": "What the fitted model implies"})


def equilibria_table(equilibria: Sequence[Mapping[str, Any]], unit: str) -> html.Table | html.P:
    if not equilibria:
        return html.P("No equilibrium in the range of the data and K.", className="muted")
    flow = any("rate_slope" in e for e in equilibria)
    slope_head = "rate slope F'(p*)" if flow else "multiplier f'(p*)"
    rule = equilibria[0].get("rule") or ("stable when F'(p*) < 0" if flow else "stable when |f'(p*)| < 1")
    head = html.Tr([html.Th(f"p* [{unit}]" if unit else "p*", scope="col"), html.Th(slope_head, scope="col"),
                    html.Th("stability", scope="col", title=rule)])
    rows = []
    for e in equilibria:
        stable = e.get("stable")
        word = "stable" if stable else "unstable" if stable is False else "–"
        rows.append(html.Tr([html.Td(fmt(e.get("value")), className="num"),
                             html.Td(fmt(e.get("rate_slope" if flow else "multiplier"), 3), className="num"),
                             html.Td(word, className="status-ok" if stable
                                     else "misfit-yes" if stable is False else "")]))
    return html.Table([html.Caption(f"Stability rule: {rule}", className="muted"), html.Thead(head),
                       html.Tbody(rows)],
                      className="comparison dyn-table", style=TABLE)


def _strong(v: float | None) -> bool:
    return v is not None and math.isfinite(v) and abs(v) > 0.95


def correlation_table(names: Sequence[str], matrix: Sequence[Sequence[float | None]] | None) -> html.Div:
    """Correlations of the fitted constants (from the Jacobian at the optimum); |r| near 1 means the data
    trade one constant against another."""
    if not matrix or len(names) < 2:
        return html.Div()
    head = html.Tr([html.Th("", scope="col"), *(html.Th(n, scope="col") for n in names)])
    rows = [html.Tr([html.Th(n, scope="row"),
                     *(html.Td(fmt(v, 3), className="num",
                               style={"fontWeight": "bold"} if i != j and _strong(v) else None)
                       for j, v in enumerate(row))])
            for i, (n, row) in enumerate(zip(names, matrix, strict=True))]
    return html.Div([
        html.H4("Correlation of the estimates", className="dyn-subtitle"),
        html.Table([html.Thead(head), html.Tbody(rows)], className="comparison dyn-table", style=TABLE),
        html.P("From the Jacobian at the optimum. Values near ±1 (bold beyond 0.95) mean the data trade one "
               "constant against the other: their separate intervals understate how well the pair is known.",
               className="hint"),
    ])


def intervals_table(parameters: Mapping[str, Mapping[str, Any]],
                    boot: Mapping[str, Sequence[float] | None] | None, boot_note: str) -> html.Table:
    """Estimate, t-based 95% interval and bootstrap percentile interval of every constant."""
    head = html.Tr([html.Th("constant", scope="col"), html.Th("estimate", scope="col"),
                    html.Th("95% interval (t-based)", scope="col"),
                    html.Th(f"95% interval (bootstrap percentile{boot_note})", scope="col")])
    rows = []
    for name, p in parameters.items():
        if p.get("fixed"):
            rows.append(html.Tr([html.Th(name, scope="row"), html.Td(fmt(p.get("value")), className="num"),
                                 html.Td("held at the estimate: its uncertainty is in neither interval", colSpan=2,
                                         className="muted")]))
            continue
        b = (boot or {}).get(name)
        rows.append(html.Tr([html.Th(name, scope="row"), html.Td(fmt(p.get("value")), className="num"),
                             html.Td(interval_text(p.get("ci95")), className="num"),
                             html.Td(interval_text(b) if boot else "not run", className="num")]))
    return html.Table([html.Thead(head), html.Tbody(rows)], className="comparison dyn-table", style=TABLE)


def derived_table(derived: Mapping[str, Mapping[str, Any]], names: Sequence[tuple[str, str, str]],
                  units: Mapping[str, str], bootstrapped: bool, *,
                  point_text: Callable[[float | None], str] | None = None,
                  not_defined: Mapping[str, str] | None = None) -> html.Table | html.P:
    """Derived quantities with their intervals (bootstrap percentile, or the delta method without one).

    ``point_text`` writes a moment on the time axis (a date, a year); ``not_defined`` gives, per key,
    why a quantity has no meaning for the form (the row then says so instead of a number).
    """
    rows = []
    for key, label, kind in names:
        if not_defined and key in not_defined:
            rows.append(html.Tr([html.Th(label, scope="row"), html.Td("not defined", className="num"),
                                 html.Td("", className="muted"), html.Td(not_defined[key], className="muted")]))
            continue
        d = derived.get(key)
        if d is None:
            continue
        moment = kind == "time" and is_time_point(key) and point_text is not None
        show = point_text if moment else fmt
        unit = "" if moment else units.get(kind, "")
        if d.get("ci95") and None not in d["ci95"]:
            ci = f"{show(d['ci95'][0])} to {show(d['ci95'][1])}"
            if d.get("method") and not str(d["method"]).startswith("bootstrap"):
                ci += " (delta method)"
            elif d.get("draws") and d.get("defined", 0) < d["draws"]:
                ci += f" (exists in {d['defined']} of the {d['draws']} refits used)"
        elif bootstrapped and d.get("draws"):
            used = f"the {d['draws']} refits used" + (f" (of {d['refits']})" if d.get("refits", 0) > d["draws"] else "")
            ci = f"too few refits where it exists: {d.get('defined', 0)} of {used}"
        else:
            ci = "run the bootstrap" if not bootstrapped else "–"
        value = show(d.get("value")) if d.get("value") is not None else "not reached within the horizon"
        rows.append(html.Tr([html.Th(label, scope="row"), html.Td(value, className="num"),
                             html.Td(unit, className="muted"), html.Td(ci, className="num")]))
    if not rows:
        return html.P("No derived times for this fit.", className="muted")
    head = html.Tr([html.Th("quantity", scope="col"), html.Th("value", scope="col"), html.Th("unit", scope="col"),
                    html.Th("95% interval", scope="col")])
    return html.Table([html.Thead(head), html.Tbody(rows)], className="comparison dyn-table", style=TABLE)
