"""One round trip from a change of K, the data, the points used or the choices to every panel.

A K typed, released on the slider or dropped with the K line, a new series, an exclusion or a new
choice of forms is answered by one request whose reply holds all that changes: the committed K and
its controls, the fits store, panels 1 to 5 and the key, the comparison table, and panel 7 (which
fit it describes, its dynamics, its bootstrap status and a forecast already asked for). Outputs whose
inputs did not change are sent as ``no_update``; a drag of the slider or of the K line is previewed in the
browser (assets/live.js) and committed here on release.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from dash import ClientsideFunction, Dash, Input, Output, State, ctx, no_update
from dash.exceptions import PreventUpdate

from .. import ids
from ..state import series_from_store
from .capacity import pending_capacity, update_capacity
from .comparison import draw_comparison
from .dynamics.bootstrap import progress_view
from .dynamics.describe import dynamics_view
from .dynamics.forecast import compute_forecast, forecast_is_stale
from .dynamics.which_fit import choose_fit
from .explore import explore_parts
from .fits import compute_fits, held_capacity
from .panels import draw_panels, with_forecast

#: The inputs that move K (the others are the data, the points used and the choices).
K_TRIGGERS = (ids.K_INPUT, ids.K_SLIDER, ids.K_DROP)


@dataclass(frozen=True)
class View:
    """What the panels are drawn with besides the data and the fits: each control's current value."""

    axis: str | None = None
    scale: str | None = None
    path_from: str | None = None
    sort: Mapping[str, Any] | None = None
    dyn_label: str | None = None
    dyn_options: Sequence[Any] | None = None
    level: float | None = None
    boot: Mapping[str, Any] | None = None
    done: Mapping[str, Any] | None = None
    summary: Mapping[str, Any] | None = None
    forecast: Mapping[str, Any] | None = None
    visible: bool = True  # panel 7 on screen: drawn now, else when it comes into view
    stale: bool = False  # panel 7 describes older fits already


def fits_are_current(previous: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                     exclusions: Mapping[str, Any] | None, settings: Mapping[str, Any] | None,
                     capacity: float | None) -> bool:
    """Whether the fits store already holds the fits of these data, points, choices and K."""
    if not previous or not data or settings is None or previous.get("key") != data.get("key"):
        return False
    if dict(previous.get("settings") or {}) != dict(settings):
        return False
    held = held_capacity(settings, capacity)
    if (previous.get("capacity") is None) != (held is None) or (
            held is not None and abs(float(previous["capacity"]) - held) > 1e-12 * max(abs(held), 1.0)):
        return False
    return same_points(previous, data, exclusions)


def same_points(previous: Mapping[str, Any] | None, data: Mapping[str, Any],
                exclusions: Mapping[str, Any] | None) -> bool:
    """Whether the fits store was made from these data with these points used (panel 1 shows them)."""
    return bool(previous) and previous.get("key") == data.get("key") and list(previous.get("used") or []) == [
        bool(u) for u in series_from_store(data, exclusions).used]


#: Forms whose increments fit with K held is a regression through the origin on one term that the browser
#: evaluates while K is dragged (assets/live.js); the others are redrawn when K is released.
PREVIEW_FORMS = ("logistic", "gompertz")


def preview_inputs(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, settings: Mapping[str, Any],
                   fits_store: Mapping[str, Any] | None, capacity: float | None,
                   candidates: Sequence[Mapping[str, Any]]) -> dict[str, Any] | None:
    """The pairs behind panel 2's lines and behind the increments fits that hold K, for the drag preview."""
    if capacity is None:
        return None
    cands = [{k: c[k] for k in ("label", "model", "slope_name", "p", "dp")} for c in candidates
             if c.get("status") == "converged" and c.get("model") in PREVIEW_FORMS]
    fits: list[dict[str, str]] = []
    x: list[float] = []
    dy: list[float] = []
    pairs = series_from_store(data, exclusions).consecutive
    if held_capacity(settings, capacity) is not None and fits_store and not isinstance(pairs, str):
        x, dy = pairs[1].tolist(), (pairs[2] - pairs[1]).tolist()
        fits = [{"label": f["label"], "model": f["model"]} for f in fits_store.get("fits", [])
                if f.get("method") == "increments" and f.get("status") == "converged" and f["model"] in PREVIEW_FORMS]
    return {"key": data.get("key"), "capacity": capacity, "candidates": cands, "fits": fits, "x": x, "dy": dy}


#: How many outputs the parts after the K controls and the fits store have.
N_EXPLORE, N_PANELS, N_COMPARISON, N_DYNAMICS = 3, 7, 2, 13  # then the preview's inputs and the pending K


def panel_seven(fits_store: Mapping[str, Any], data: Mapping[str, Any],
                exclusions: Mapping[str, Any] | None, view: View) -> tuple[Any, ...]:
    """Panel 7 for new fits: the picker, the dynamics, the bootstrap status, the forecast and whether the
    dynamics wait until the panel comes into view (they are not drawn off screen)."""
    options, label = choose_fit(fits_store, view.dyn_label)
    if view.visible:
        described, stale = dynamics_view(fits_store, label, data, exclusions, view.done, view.level), False
    else:
        described, stale = (no_update,) * 5, True
    progress = progress_view(view.boot, view.summary, fits_store, label)
    forecast: Any = no_update
    if view.forecast:
        forecast = None if forecast_is_stale(view.forecast, fits_store) else compute_forecast(
            view.forecast["request"], label, fits_store, data, exclusions, view.done)
    return (no_update if list(options) == list(view.dyn_options or []) else options,
            no_update if label == view.dyn_label else label, *described, *progress, forecast,
            no_update if stale == view.stale else stale)


def live_update(trigger: Any, k_input: float | None, k_slider: float | None, relayout: Mapping[str, Any] | None,
                data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                settings: Mapping[str, Any] | None, current_k: float | None, previous_key: str | None,
                previous: Mapping[str, Any] | None, pending: Mapping[str, Any] | None, view: View) -> tuple[Any, ...]:
    """Every output of the reply, in the order :func:`register` lists them (``no_update`` where nothing changed).

    The browser cancels a reply still on its way when the next change starts another, so each reply
    is worked out from what the page holds, not from the change alone: data whose first K has not
    arrived (``previous_key`` is another key, or a reopened record's K waits) are answered as new data.
    """
    if data and (previous_key != data.get("key") or pending_capacity(pending, data) is not None):
        trigger = ids.DATA
    cap = update_capacity(trigger, k_input, k_slider, relayout, data, settings, exclusions, current_k,
                          previous_key=previous_key, pending=pending)
    k_moved = cap[0] is not no_update
    k = cap[0] if k_moved else current_k
    key_out = (data or {}).get("key") if k_moved or trigger in (None, ids.DATA) else no_update
    capacity_out = (*cap, key_out)
    if trigger in K_TRIGGERS and not k_moved and cap[7] is no_update and (
            settings is None or fits_are_current(previous, data, exclusions, settings, k)):
        raise PreventUpdate  # the same K again, with nothing left to draw
    # a reopened record's K is used once, by the reply to its data
    pending_out = None if pending and trigger in (None, ids.DATA) else no_update
    if data is None or settings is None:
        return (*capacity_out, *(no_update,) * (1 + N_EXPLORE + N_PANELS + N_COMPARISON + N_DYNAMICS + 1),
                pending_out)
    refit = not fits_are_current(previous, data, exclusions, settings, k)
    fits_store = compute_fits(data, exclusions, settings, k) if refit else previous
    change, candidate, readout, fitted = explore_parts(data, exclusions, settings, k, view.axis or "state", view.scale)
    explore = (no_update if trigger in K_TRIGGERS and same_points(previous, data, exclusions) else change,
               candidate, readout)
    panels = with_forecast(draw_panels(fits_store, k, data, exclusions, view.scale, view.path_from),
                           view.forecast, fits_store)
    preview = preview_inputs(data, exclusions, settings, fits_store, k, fitted)
    if not refit:
        # the fits are as they were: only the trajectory's K line and the key's K mark move
        panels = (panels[0], *(no_update,) * 5, panels[6])
        return (*capacity_out, no_update, *explore, *panels, *(no_update,) * (N_COMPARISON + N_DYNAMICS), preview,
                pending_out)
    comparison = draw_comparison(fits_store, view.sort, view.summary)
    seven = panel_seven(fits_store, data, exclusions, view) if fits_store else (no_update,) * N_DYNAMICS
    return (*capacity_out, fits_store, *explore, *panels, *comparison, *seven, preview, pending_out)


def register(app: Dash) -> None:
    # the slider or the K line's handle being dragged: panel 2's lines, the K line and the increments fits
    # that hold K follow in the browser (assets/live.js); the value on release comes to the callback below
    app.clientside_callback(ClientsideFunction(namespace="growthcore_live", function_name="kDrop"),
                            Output(ids.K_DROP, "data"), Input(ids.G_TRAJECTORY, "relayoutData"),
                            prevent_initial_call=True)
    app.clientside_callback(ClientsideFunction(namespace="growthcore_live", function_name="preview"),
                            Input(ids.K_SLIDER, "drag_value"),
                            State(ids.PREVIEW, "data"), prevent_initial_call=True)
    # the K line's handle is followed from pointer events, which need the preview's inputs at hand
    app.clientside_callback(ClientsideFunction(namespace="growthcore_live", function_name="keep"),
                            Input(ids.PREVIEW, "data"), prevent_initial_call=True)

    @app.callback(
        Output(ids.CAPACITY, "data"), Output(ids.K_INPUT, "value"), Output(ids.K_SLIDER, "value"),
        Output(ids.K_SLIDER, "min"), Output(ids.K_SLIDER, "max"), Output(ids.K_SLIDER, "step"),
        Output(ids.K_SLIDER, "marks"), Output(ids.K_NOTE, "children"), Output(ids.CAPACITY_DATA, "data"),
        Output(ids.FITS, "data"),
        Output(ids.G_CHANGE, "figure"), Output(ids.G_CANDIDATE, "figure"), Output(ids.CANDIDATE_SUMMARY, "children"),
        Output(ids.G_TRAJECTORY, "figure"), Output(ids.G_RESID_TIME, "figure"), Output(ids.G_RESID_FITTED, "figure"),
        Output(ids.G_OBS_PRED, "figure"), Output(ids.MISFIT_FLAG, "children"), Output(ids.TRAJECTORY_NOTE, "children"),
        Output(ids.FORM_KEY, "children"),
        Output(ids.COMPARISON, "children"), Output(ids.COMPARISON_NOTES, "children"),
        Output(ids.DYN_FIT, "options"), Output(ids.DYN_FIT, "value"),
        Output(ids.DYN_SENTENCES, "children"), Output(ids.DYN_EQUILIBRIA, "children"),
        Output(ids.G_COBWEB, "figure"), Output(ids.G_SWEEP, "figure"), Output(ids.DYN_DERIVED, "children"),
        Output(ids.BOOT_PROGRESS, "value"), Output(ids.BOOT_PROGRESS, "max"), Output(ids.BOOT_STATUS, "children"),
        Output(ids.DYN_INTERVALS, "children"), Output(ids.FORECAST, "data"), Output(ids.DYN_STALE, "data"),
        Output(ids.PREVIEW, "data"),
        Output(ids.PENDING_CAPACITY, "data"),
        Input(ids.K_INPUT, "value"), Input(ids.K_SLIDER, "value"), Input(ids.K_DROP, "data"),
        Input(ids.DATA, "data"), Input(ids.EXCLUSIONS, "data"), Input(ids.SETTINGS, "data"),
        Input(ids.K_FROM_FIT, "n_clicks"),
        State(ids.CAPACITY, "data"), State(ids.CAPACITY_DATA, "data"), State(ids.FITS, "data"),
        State(ids.PENDING_CAPACITY, "data"),
        State(ids.CHANGE_AXIS, "value"), State(ids.STATE_SCALE, "value"), State(ids.PATH_FROM, "value"),
        State(ids.SORT, "data"), State(ids.DYN_FIT, "value"), State(ids.DYN_FIT, "options"),
        State(ids.DYN_LEVEL, "value"), State(ids.BOOT, "data"), State(ids.BOOT_DONE, "data"),
        State(ids.BOOT_SUMMARY, "data"), State(ids.FORECAST, "data"), State(ids.DYN_VISIBLE, "data"),
        State(ids.DYN_STALE, "data"),
        prevent_initial_call=False,
    )
    def _live(k_input, k_slider, relayout, data, exclusions, settings, k_clicks, current, previous_key, previous,
              pending, axis, scale, path_from, sort, label, options, level, boot, done, summary, forecast, visible,
              stale):
        trigger = ctx.triggered_id
        if f"{ids.DATA}.data" in ctx.triggered_prop_ids:
            trigger = ids.DATA  # new data arriving with another change in one call: the first guess first
        elif trigger == ids.K_FROM_FIT and not k_clicks:
            trigger = "none"
        view = View(axis, scale, path_from, sort, label, options, level, boot, done, summary, forecast, bool(visible),
                    bool(stale))
        return live_update(trigger, k_input, k_slider, relayout, data, exclusions, settings, current,
                           previous_key, previous, pending, view)


__all__ = ["PREVIEW_FORMS", "View", "preview_inputs", "fits_are_current", "same_points", "live_update", "panel_seven",
           "register"]
