"""Panel 6: the comparison table and its sorting."""

from __future__ import annotations

from typing import Any, Mapping

from dash import ALL, Dash, Input, Output, State, ctx, html, no_update

from app import ids
from app.components.comparison import comparison_table


def draw_comparison(fits_store: Mapping[str, Any] | None, sort: Mapping[str, Any] | None,
                    done: Mapping[str, Any] | None = None) -> tuple[Any, Any]:
    """The table and its notes; ``done`` holds the bootstrap summaries of panel 7 (their intervals join the table)."""
    if not fits_store:
        return html.P("Fitting…", className="muted"), []
    from app.callbacks.dynamics import boot_intervals

    notes = [html.P(n) for n in fits_store.get("notes", [])]
    return comparison_table(fits_store["comparison"], fits_store["fits"], sort, boot_intervals(done, fits_store)), notes


def next_sort(column: str, current: Mapping[str, Any] | None) -> dict[str, Any]:
    """First click sorts ascending, the second descending, the third back to the engine's order."""
    if not current or current.get("column") != column:
        return {"column": column, "descending": False}
    if not current.get("descending"):
        return {"column": column, "descending": True}
    return {"column": None, "descending": False}


def register(app: Dash) -> None:
    app.callback(Output(ids.COMPARISON, "children"), Output(ids.COMPARISON_NOTES, "children"),
                 Input(ids.FITS, "data"), Input(ids.SORT, "data"), Input(ids.BOOT_SUMMARY, "data"))(draw_comparison)

    @app.callback(Output(ids.SORT, "data"), Input({"type": ids.SORT_BUTTON, "column": ALL}, "n_clicks"),
                  State(ids.SORT, "data"), prevent_initial_call=True)
    def _sort(_clicks, current):
        trigger = ctx.triggered_id
        if not isinstance(trigger, dict) or not ctx.triggered or not ctx.triggered[0].get("value"):
            return no_update
        return next_sort(trigger["column"], current)
