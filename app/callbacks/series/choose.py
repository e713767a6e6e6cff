"""Choosing a series: a click on the grid or the plate map, or the previous and next buttons, opens it
in the panels; the frame on the grid and the map follows the series shown, in the same reply that
reads every series of another file (read.py)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from dash import ClientsideFunction, Dash, Input, Output, Patch, State, ctx, no_update
from dash.exceptions import PreventUpdate

from growthcore.limits import Limits

from ... import ids
from ...components.series import ALL_GROUPS
from ...heavy import direct, runner_of
from ..data import server_limits
from .groups import members
from .overview import highlight_shape, plate_highlight
from .read import read_all_series


def clicked_series(click: Mapping[str, Any] | None) -> str | None:
    """The series id a click on a grid panel or a plate cell carries (None for an empty well)."""
    points = (click or {}).get("points") or []
    if not points:
        return None
    sid = points[0].get("customdata")
    if isinstance(sid, list):
        sid = sid[0] if sid else None
    return str(sid) if sid is not None else None


def step_series(current: str | None, order: Sequence[str], step: int) -> str | None:
    """The series ``step`` places from ``current`` in ``order``, wrapping round; the first when absent."""
    if not order:
        return None
    if current not in order:
        return order[0] if step > 0 else order[-1]
    return order[(list(order).index(current) + step) % len(order)]


def choose_series(trigger: str | None, grid_click: Any, plate_click: Any, data: Mapping[str, Any] | None,
                  batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None, group: str | None) -> Any:
    """The value for the series dropdown (which reads the series into the panels), or no_update."""
    if not batch:
        raise PreventUpdate
    current = (data or {}).get("name")
    if trigger == ids.GRID:
        target = clicked_series(grid_click)
    elif trigger == ids.PLATE:
        target = clicked_series(plate_click)
    elif trigger in (ids.SERIES_PREV, ids.SERIES_NEXT):
        target = step_series(current, members(batch, groups, group), -1 if trigger == ids.SERIES_PREV else 1)
    else:
        raise PreventUpdate
    if target is None or target == current or target not in batch["names"]:
        raise PreventUpdate
    return target


def position_text(data: Mapping[str, Any] | None, batch: Mapping[str, Any] | None, groups: Mapping[str, Any] | None,
                  group: str | None) -> str:
    if not batch or not data:
        return ""
    order = members(batch, groups, group)
    name = data.get("name")
    where = f"group {group}" if group and group != ALL_GROUPS else "the file"
    if name in order:
        return f"{name}: {order.index(name) + 1} of {len(order)} in {where}"
    return f"{name} (not in {where})"


def highlight_patches(data: Mapping[str, Any] | None, view: Mapping[str, Any] | None,
                      batch: Mapping[str, Any] | None) -> tuple[Any, Any]:
    """Patches that move the frame of the grid and the plate map to the series now in the panels.

    Only when the grid on screen was drawn for the file now shown; a new file redraws both anyway.
    """
    if not batch or not data or not view or view.get("key") != batch.get("key") \
            or not str(batch.get("key", "")).startswith(f"{data.get('sha256')}|"):
        raise PreventUpdate
    name = data.get("name")
    grid = Patch()
    grid["layout"]["shapes"][0] = highlight_shape(view.get("boxes", {}).get(name))
    plate: Any = no_update
    if batch.get("plate"):
        plate = Patch()
        plate["layout"]["shapes"][0] = plate_highlight(name)
    return grid, plate


def read_or_frame(source: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                  previous: Mapping[str, Any] | None, view: Mapping[str, Any] | None, *, limits: Limits | None = None,
                  run: Any = direct) -> tuple[Any, ...]:
    """Outputs for new data: the file's series, whether the picker, the overview and the plate box are
    hidden, and the patches that move the frame of the grid and the plate map.

    Another series of the same file only moves the frame (one callback for both, so a series switch
    sets off one callback fewer); another file or other choices are read anew, and the grid and the map
    drawn for them frame the series shown."""
    try:
        batch = read_all_series(source, data, previous, limits=limits, run=run)
    except PreventUpdate:
        return (no_update,) * 4 + highlight_patches(data, view, previous)  # raises where nothing moves
    return batch, batch is None, batch is None, not (batch and batch.get("plate")), no_update, no_update


def register(app: Dash) -> None:
    limits = server_limits(app)
    run = runner_of(app)

    @app.callback(
        Output(ids.SERIES_PICK, "value", allow_duplicate=True),
        Input(ids.GRID, "clickData"), Input(ids.PLATE, "clickData"), Input(ids.SERIES_PREV, "n_clicks"),
        Input(ids.SERIES_NEXT, "n_clicks"),
        State(ids.DATA, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_GROUPS, "data"),
        State(ids.GROUP_FILTER, "value"),
        prevent_initial_call=True,
    )
    def _choose(grid_click, plate_click, _prev, _next, data, batch, groups, group):
        return choose_series(ctx.triggered_id, grid_click, plate_click, data, batch, groups, group)

    # the panels scroll into view in the browser (assets/series.js)
    app.clientside_callback(ClientsideFunction(namespace="growthcore_series", function_name="scrollToPanels"),
                            Input(ids.GRID, "clickData"), Input(ids.PLATE, "clickData"), State(ids.MAIN, "id"),
                            prevent_initial_call=True)

    # new data: every series of another file read, or the frame around the series shown moved without
    # redrawing the grid or the map
    @app.callback(
        Output(ids.BATCH_SERIES, "data"), Output(ids.PICKER_BOX, "hidden"), Output(ids.SERIES_OVERVIEW, "hidden"),
        Output(ids.PLATE_BOX, "hidden"),
        Output(ids.GRID, "figure", allow_duplicate=True), Output(ids.PLATE, "figure", allow_duplicate=True),
        Input(ids.DATA, "data"),
        State(ids.SOURCE, "data"), State(ids.BATCH_SERIES, "data"), State(ids.GRID_VIEW, "data"),
        prevent_initial_call="initial_duplicate",
    )
    def _read(data, source, previous, view):
        return read_or_frame(source, data, previous, view, limits=limits, run=run)
    # the series' place in its file (position_text) is written in app/callbacks/follow.py
