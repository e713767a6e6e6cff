"""Panels 3 to 5 drawn from the fits store: trajectory, residuals, observed against predicted."""

from __future__ import annotations

from typing import Any, Mapping

from dash import Dash, Input, Output, State, html

from app import ids
from app.callbacks.explore import labels_of
from app.figures.common import message_figure
from app.figures.residuals import observed_predicted_figure, residual_fitted_figure, residual_time_figure
from app.figures.trajectory import trajectory_figure
from app.state import series_from_store


def misfit_flag(fits: list[Mapping[str, Any]]) -> list[Any]:
    flagged = [f for f in fits if f.get("diagnostics") and f["diagnostics"].get("systematic")]
    if not fits:
        return []
    if not flagged:
        return [html.Div("No sign of systematic misfit (runs test and Durbin–Watson).", className="flag flag-ok")]
    return [html.Div([html.Strong("⚠ Systematic misfit: "),
                      "; ".join(f"{f['label']} — {f['diagnostics']['message'].replace('residuals look systematic: ', '')}"
                                for f in flagged)], className="flag flag-warn")]


def draw_panels(fits_store: Mapping[str, Any] | None, capacity: float | None, data: Mapping[str, Any] | None,
                exclusions: Mapping[str, Any] | None) -> tuple[Any, ...]:
    """Outputs: trajectory, residuals against time and fitted, observed against predicted, flag, note."""
    if data is None:
        blank = message_figure("loading the data…")
        return blank, blank, blank, blank, [], ""
    series = series_from_store(data, exclusions)
    current = fits_store if fits_store and fits_store.get("key") == data["key"] else None
    fits = current["fits"] if current else []
    labels = labels_of(data)
    traj = trajectory_figure(data, [bool(u) for u in series.used], fits, capacity, labels)
    note = ""
    if any(f.get("method") == "increments" and f.get("status") == "converged" for f in fits):
        note = ("Increments fits are drawn as their map iterated from the first observation; their residuals "
                "are one step ahead. ")
    if current and current.get("capacity") is not None and capacity is not None \
            and abs(current["capacity"] - capacity) > 1e-12 * max(abs(capacity), 1.0):
        note += (f"The fits are for K = {current['capacity']:.4g}; they are refitted at K = {capacity:.4g} "
                "when you release the slider.")
    return (traj, residual_time_figure(fits, labels), residual_fitted_figure(fits, labels),
            observed_predicted_figure(fits, labels), misfit_flag(fits), note)


def with_forecast(outputs: tuple[Any, ...], forecast: Mapping[str, Any] | None,
                  fits_store: Mapping[str, Any] | None) -> tuple[Any, ...]:
    """The panels with the forecast band (panel 7) drawn on the trajectory, when it belongs to these fits."""
    from app.callbacks.dynamics import band_on_trajectory

    return (band_on_trajectory(outputs[0], forecast, fits_store), *outputs[1:])


def register(app: Dash) -> None:
    app.callback(
        Output(ids.G_TRAJECTORY, "figure"), Output(ids.G_RESID_TIME, "figure"), Output(ids.G_RESID_FITTED, "figure"),
        Output(ids.G_OBS_PRED, "figure"), Output(ids.MISFIT_FLAG, "children"), Output(ids.TRAJECTORY_NOTE, "children"),
        Input(ids.FITS, "data"), Input(ids.CAPACITY, "data"), Input(ids.FORECAST, "data"),
        State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"),
    )(lambda fits_store, capacity, fc, data, exclusions: with_forecast(
        draw_panels(fits_store, capacity, data, exclusions), fc, fits_store))
