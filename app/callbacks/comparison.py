"""Panel 6: the comparison table and its sorting (the order itself is kept in the browser: assets/live.js)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import ALL, ClientsideFunction, Dash, Input, Output, State, html

from .. import ids
from ..components.comparison import comparison_table
from .dynamics.bootstrap import boot_intervals


def draw_comparison(fits_store: Mapping[str, Any] | None, sort: Mapping[str, Any] | None,
                    done: Mapping[str, Any] | None = None) -> tuple[Any, Any]:
    """The table and its notes; ``done`` holds the bootstrap summaries of panel 7 (their intervals join the table)."""
    if not fits_store:
        return html.P("Fitting…", className="muted"), []
    notes = [html.P(n) for n in fits_store.get("notes", [])]
    return comparison_table(fits_store["comparison"], fits_store["fits"], sort, boot_intervals(done, fits_store)), notes


def register(app: Dash) -> None:
    # new fits redraw the table in app/callbacks/live.py; here: a new order and finished bootstraps
    app.callback(Output(ids.COMPARISON, "children", allow_duplicate=True),
                 Output(ids.COMPARISON_NOTES, "children", allow_duplicate=True),
                 Input(ids.SORT, "data"), Input(ids.BOOT_SUMMARY, "data"), State(ids.FITS, "data"),
                 prevent_initial_call=True)(
        lambda sort, summary, fits_store: draw_comparison(fits_store, sort, summary))

    # a click on a column header: first ascending, then descending, then the engine's order (in the browser:
    # the buttons are drawn anew with every table, which must not cost a request)
    app.clientside_callback(ClientsideFunction(namespace="growthcore_live", function_name="sort"),
                            Output(ids.SORT, "data"), Input({"type": ids.SORT_BUTTON, "column": ALL}, "n_clicks"),
                            State(ids.SORT, "data"), prevent_initial_call=True)
