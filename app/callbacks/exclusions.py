"""Click a point to leave it out (or bring it back); the list, undo and restore-all."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import ALL, Dash, Input, Output, State, ctx, no_update

from .. import ids
from ..state import empty_exclusions, restore_exclusion, toggle_exclusion, undo_exclusion


def clicked_index(click: Mapping[str, Any] | None) -> int | None:
    """The observation behind a clicked point: customdata is [index, row] on every point trace."""
    if not click or not click.get("points"):
        return None
    cd = click["points"][0].get("customdata")
    if isinstance(cd, (list, tuple)) and cd:
        cd = cd[0]
    if isinstance(cd, (int, float)) and not isinstance(cd, bool):
        return int(cd)
    return None


def index_of_row(data: Mapping[str, Any], row: int) -> int | None:
    """The point read from spreadsheet row ``row`` (its position + 1 when rows are not known)."""
    rows = data.get("rows")
    if rows:
        return rows.index(int(row)) if int(row) in rows else None
    return int(row) - 1 if 1 <= int(row) <= len(data["t"]) else None


def update_exclusions(trigger: Any, state: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                      click: Mapping[str, Any] | None = None, restore_index: int | None = None
                      ) -> dict[str, Any] | None:
    """The new exclusions state, or None when nothing changes.

    ``restore_index`` is the point to restore for the list's buttons, and the typed row number for
    the keyboard route (``EXCLUDE_ROW_BUTTON``).
    """
    if data is None:
        return None
    key = data["key"]
    state = state or empty_exclusions(key)
    if trigger == ids.DATA:
        return None if state.get("key") == key else empty_exclusions(key)
    if trigger in ids.GRAPHS:
        index = clicked_index(click)
        if index is None or not 0 <= index < len(data["t"]):
            return None
        return toggle_exclusion(state, key, index)
    if trigger == ids.EXCLUSION_UNDO:
        return undo_exclusion(state) if state.get("key") == key else None
    if trigger == ids.EXCLUSION_CLEAR:
        return restore_exclusion(state, key, None)
    if trigger == ids.EXCLUDE_ROW_BUTTON and restore_index is not None:
        index = index_of_row(data, restore_index)
        return toggle_exclusion(state, key, index) if index is not None else None
    if trigger == "restore" and restore_index is not None:
        return restore_exclusion(state, key, restore_index)
    return None


def register(app: Dash) -> None:
    @app.callback(
        Output(ids.EXCLUSIONS, "data"),
        *[Output(g, "clickData") for g in ids.GRAPHS],
        *[Input(g, "clickData") for g in ids.GRAPHS],
        Input(ids.EXCLUSION_UNDO, "n_clicks"), Input(ids.EXCLUSION_CLEAR, "n_clicks"),
        Input({"type": ids.RESTORE, "index": ALL}, "n_clicks"), Input(ids.EXCLUDE_ROW_BUTTON, "n_clicks"),
        State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"), State(ids.EXCLUDE_ROW, "value"),
        prevent_initial_call=True,
    )
    def _exclusions(*args):
        # new data bring their own (empty) exclusions in the same reply (app/callbacks/data.py), so that
        # the reply to new data need not wait for a second round trip
        clicks = args[: len(ids.GRAPHS)]
        undo, clear, _restores, by_row, data, state, row = args[len(ids.GRAPHS):]
        trigger = ctx.triggered_id
        click = None
        restore_index = None
        if isinstance(trigger, dict) and trigger.get("type") == ids.RESTORE:
            if not ctx.triggered or not ctx.triggered[0].get("value"):
                return (no_update,) * (1 + len(ids.GRAPHS))
            restore_index, trigger = int(trigger["index"]), "restore"
        elif trigger in ids.GRAPHS:
            click = clicks[ids.GRAPHS.index(trigger)]
        elif trigger == ids.EXCLUDE_ROW_BUTTON:
            if not by_row or row is None:
                return (no_update,) * (1 + len(ids.GRAPHS))
            restore_index = int(row)
        elif (trigger in (ids.EXCLUSION_UNDO, ids.EXCLUSION_CLEAR)
              and not (undo if trigger == ids.EXCLUSION_UNDO else clear)):
            return (no_update,) * (1 + len(ids.GRAPHS))
        new = update_exclusions(trigger, state, data, click, restore_index)
        resets = tuple(None if g == trigger else no_update for g in ids.GRAPHS)
        return (new if new is not None else no_update, *resets)

    # the list of excluded points is drawn in app/callbacks/follow.py
