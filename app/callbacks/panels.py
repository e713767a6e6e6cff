"""Panels 3 to 5 drawn from the fits store: trajectory, residuals, observed against predicted, and the key."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from dash import Dash, Input, Output, State, html

from growthcore.figures.common import form_key, message_figure
from growthcore.figures.plain import STEPS_AHEAD
from growthcore.figures.residuals import observed_predicted_figure, residual_fitted_figure, residual_time_figure
from growthcore.figures.trajectory import PATH_NAMES, trajectory_figure

from .. import ids
from ..components.form_key import form_key_view
from ..state import series_from_store
from .dynamics.forecast import band_on_trajectory
from .explore import labels_of


def misfit_flag(fits: list[Mapping[str, Any]]) -> list[Any]:
    flagged = [f for f in fits if f.get("diagnostics") and f["diagnostics"].get("systematic")]
    if not fits:
        return []
    if not flagged:
        return [html.Div("No sign of systematic misfit (runs test and Durbin–Watson).", className="flag flag-ok")]
    return [html.Div([html.Strong("⚠ Systematic misfit: "),
                      "; ".join(f"{f['label']} — "
                                f"{f['diagnostics']['message'].replace('residuals look systematic: ', '')}"
                                for f in flagged)], className="flag flag-warn")]


def trajectory_note(fits: list[Mapping[str, Any]], path_from: str | None) -> str:
    """What panel 3 shows of the increments fits, and how the chosen iterated path starts."""
    if not any(f.get("method") == "increments" and f.get("status") == "converged" for f in fits):
        return ""
    note = ("Increments fits are drawn as what they fit: each observation predicted one step ahead from the one "
            "before (markers). ")
    if path_from == "first":
        note += f"Lines: the same map {PATH_NAMES['first']}, fed its own output; it may drift from the data. "
    elif path_from == "last":
        note += f"Lines: the same map {PATH_NAMES['last']}, {STEPS_AHEAD} steps on, where the forecast starts. "
    return note


def draw_panels(fits_store: Mapping[str, Any] | None, capacity: float | None, data: Mapping[str, Any] | None,
                exclusions: Mapping[str, Any] | None, scale: str | None = None,
                path_from: str | None = None) -> tuple[Any, ...]:
    """Outputs: trajectory, residuals against time and fitted, observed against predicted, flag, note, key."""
    if data is None:
        blank = message_figure("loading the data…")
        return blank, blank, blank, blank, [], "", []
    series = series_from_store(data, exclusions)
    current = fits_store if fits_store and fits_store.get("key") == data["key"] else None
    fits = current["fits"] if current else []
    models = (current.get("settings") or {}).get("models") if current else None
    labels = labels_of(data)
    traj = trajectory_figure(data, [bool(u) for u in series.used], fits, capacity, labels, models=models,
                             scale=scale, path_from=path_from or "none")
    note = trajectory_note(fits, path_from)
    key = form_key_view(form_key(fits, models), capacity=capacity is not None)
    return (traj, residual_time_figure(fits, labels, models=models),
            residual_fitted_figure(fits, labels, models=models, scale=scale),
            observed_predicted_figure(fits, labels, models=models, scale=scale), misfit_flag(fits), note, key)


def with_forecast(outputs: tuple[Any, ...], forecast: Mapping[str, Any] | None,
                  fits_store: Mapping[str, Any] | None) -> tuple[Any, ...]:
    """The panels with the forecast band (panel 7) drawn on the trajectory, when it belongs to these fits."""
    return (band_on_trajectory(outputs[0], forecast, fits_store), *outputs[1:])


def register(app: Dash) -> None:
    # new fits and a change of K redraw these panels in app/callbacks/live.py; here: the view's own switches
    # and a forecast drawn or cleared
    app.callback(
        *[Output(i, p, allow_duplicate=True) for i, p in ((ids.G_TRAJECTORY, "figure"), (ids.G_RESID_TIME, "figure"),
                                                          (ids.G_RESID_FITTED, "figure"), (ids.G_OBS_PRED, "figure"),
                                                          (ids.MISFIT_FLAG, "children"),
                                                          (ids.TRAJECTORY_NOTE, "children"),
                                                          (ids.FORM_KEY, "children"))],
        Input(ids.FORECAST, "data"), Input(ids.STATE_SCALE, "value"), Input(ids.PATH_FROM, "value"),
        State(ids.FITS, "data"), State(ids.CAPACITY, "data"), State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"),
        prevent_initial_call=True,
    )(lambda fc, scale, path_from, fits_store, capacity, data, exclusions: with_forecast(
        draw_panels(fits_store, capacity, data, exclusions, scale, path_from), fc, fits_store))
