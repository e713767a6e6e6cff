"""Panels 1 and 2: the change per step and the candidate terms, live with every move of K."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, State, html

from growthcore.errors import GrowthcoreInputError
from growthcore.explore import Candidate, CandidateFit, candidate_fit, candidates_for, change_table
from growthcore.figures.common import message_figure
from growthcore.figures.explore import candidate_figure, change_figure

from .. import ids
from ..components.comparison import fmt
from ..state import series_from_store


def labels_of(data: Mapping[str, Any], *, h: float | None = None) -> dict[str, Any]:
    """What the figure builders need to title axes and hovers."""
    return {"quantity": data.get("quantity") or data.get("value_column", "p"), "value_unit": data.get("value_unit", ""),
            "time_unit": data.get("time_unit", ""), "rows": data.get("rows"), "uirevision": data.get("key"), "h": h}


def change_to_store(table: Any) -> dict[str, Any]:
    return {"index": [int(i) for i in table.index], "t": table.t.tolist(), "p": table.p.tolist(),
            "rate": table.rate.tolist(), "dp": table.dp.tolist(), "used": [bool(u) for u in table.used],
            "regular": table.regular, "h": table.h, "message": table.message}


def candidate_to_store(c: CandidateFit) -> dict[str, Any]:
    return {"label": c.candidate.label, "model": c.candidate.model, "status": c.status, "message": c.message,
            "index": [int(i) for i in c.index], "g": c.g.tolist(), "dp": c.dp.tolist(), "p": c.p.tolist(),
            "fitted": c.fitted.tolist(), "slope": c.slope, "slope_name": c.slope_name, "slope_se": c.slope_se,
            "slope_ci95": list(c.slope_ci95) if c.slope_ci95 else None, "r2_uncentered": c.r2_uncentered,
            "shape": c.shape, "capacity": c.capacity, "at_bound": list(c.at_bound)}


def candidate_readout(cands: list[dict[str, Any]], notes: list[str], capacity: float | None, unit: str) -> list[Any]:
    items = []
    for c in cands:
        if c["status"] != "converged":
            items.append(html.Li([html.Strong(f"g = {c['label']}: "), f"not fitted — {c['message']}"]))
            continue
        ci = c["slope_ci95"]
        interval = f" [{fmt(ci[0])}, {fmt(ci[1])}]" if ci else ""
        shape = "".join(f", {n} = {fmt(v)}" + (" (at its bound)" if n in c.get("at_bound", []) else "")
                        for n, v in c["shape"].items())
        if c["slope_name"] in c.get("at_bound", []):
            interval += " (at its bound)"
        items.append(html.Li([
            html.Strong(f"g = {c['label']}"), ": slope ",
            html.Span(f"{c['slope_name']} = {fmt(c['slope'])}", className="slope"), f"{interval} per step{shape}; ",
            html.Span(f"uncentered R² = {fmt(c['r2_uncentered'])}", className="r2u"),
        ], className="candidate-line"))
    head = (f"Regressions through the origin at K = {fmt(capacity)} {unit}. Uncentered R² (1 − SSE/ΣΔp²) is "
            "not comparable with an ordinary R².") if capacity else "Regressions through the origin."
    return [html.P(head, className="muted"), html.Ul(items, className="candidates"),
            *[html.P(n, className="muted") for n in notes]]


def style_order(settings: Mapping[str, Any]) -> dict[str, int]:
    """Position of each form among the chosen forms: the fits panels colour a form by it."""
    return {model: k for k, model in enumerate(settings.get("models", []))}


def explore_panels(data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                   settings: Mapping[str, Any] | None, capacity: float | None, axis: str = "state",
                   scale: str | None = None) -> tuple[Any, ...]:
    """Outputs: the change figure, the candidate figure and the slope/R² readout."""
    return explore_parts(data, exclusions, settings, capacity, axis, scale)[:3]


def explore_parts(data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                  settings: Mapping[str, Any] | None, capacity: float | None, axis: str = "state",
                  scale: str | None = None) -> tuple[Any, Any, Any, list[dict[str, Any]]]:
    """The three outputs of :func:`explore_panels` and the plain candidate fits behind panel 2."""
    if data is None or settings is None:
        blank = message_figure("loading the data…")
        return blank, blank, [], []
    series = series_from_store(data, exclusions)
    table = change_table(series)
    labels = labels_of(data, h=table.h)
    fig1 = change_figure(change_to_store(table), labels, against=axis, scale=scale)
    try:
        cands, notes = candidates_for(settings.get("models", []), settings.get("terms", []))
    except GrowthcoreInputError as exc:
        cands, notes = [], [str(exc).splitlines()[0]]
    fitted = [candidate_to_store(candidate_fit(series, c, capacity)) for c in cands]
    order = style_order(settings)
    for c in fitted:
        c["style"] = order.get(c["model"], len(order))
    fig2 = candidate_figure(fitted, labels, both=settings.get("method") == "both", notes=notes)
    return fig1, fig2, candidate_readout(fitted, notes, capacity, data.get("value_unit", "")), fitted


def register(app: Dash) -> None:
    # a change of K, the data or the choices redraws these panels in app/callbacks/live.py
    app.callback(
        Output(ids.G_CHANGE, "figure", allow_duplicate=True), Output(ids.G_CANDIDATE, "figure", allow_duplicate=True),
        Output(ids.CANDIDATE_SUMMARY, "children", allow_duplicate=True),
        Input(ids.CHANGE_AXIS, "value"), Input(ids.STATE_SCALE, "value"),
        State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"), State(ids.SETTINGS, "data"),
        State(ids.CAPACITY, "data"),
        prevent_initial_call=True,
    )(lambda axis, scale, data, exclusions, settings, capacity: explore_panels(data, exclusions, settings, capacity,
                                                                               axis, scale))


__all__ = ["Candidate", "explore_panels", "labels_of"]
