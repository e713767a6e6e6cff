"""The list of points the user left out, each restorable, with undo."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import dcc, html

from .. import ids


def exclusions_section() -> html.Section:
    return html.Section([
        html.H2("Excluded points", className="section-title"),
        html.P("Click a point in any panel to leave it out of every fit; click it again to restore it.",
               className="hint"),
        html.Div([
            html.Label("Row", htmlFor=ids.EXCLUDE_ROW, className="field-label inline-label"),
            dcc.Input(id=ids.EXCLUDE_ROW, type="number", min=1, step=1, debounce=True, className="row-input"),
            html.Button("Exclude or restore", id=ids.EXCLUDE_ROW_BUTTON, n_clicks=0, className="button button-small",
                        type="button"),
        ], className="button-row"),
        html.Div(id=ids.EXCLUSION_LIST),
        html.Div([
            html.Button("Undo", id=ids.EXCLUSION_UNDO, n_clicks=0, className="button button-small", type="button"),
            html.Button("Restore all", id=ids.EXCLUSION_CLEAR, n_clicks=0, className="button button-small",
                        type="button"),
        ], className="button-row"),
    ], className="section", **{"aria-label": "Excluded points"})


def exclusion_items(data: Mapping[str, Any] | None, state: Mapping[str, Any] | None) -> html.Ul | html.P:
    if not data or not state or state.get("key") != data.get("key") or not state.get("excluded"):
        return html.P("None: every point is used.", className="muted")
    rows = data.get("rows")
    tu, vu = data.get("time_unit", ""), data.get("value_unit", "")
    items = []
    for key in sorted(state["excluded"], key=int):
        i = int(key)
        row = rows[i] if rows else i + 1
        t, p = data["t"][i], data["p"][i]
        items.append(html.Li([
            html.Span(f"row {row}: t = {t:g} {tu}, p = {p:g} {vu} — {state['excluded'][key]}"),
            html.Button("restore", id={"type": ids.RESTORE, "index": i}, n_clicks=0,
                        className="link-button", type="button", **{"aria-label": f"restore row {row}"}),
        ]))
    return html.Ul(items, className="exclusions")
