"""The forecast of the chosen fit with its band (from the bootstrap when one has run), its notes, and
the band drawn on the trajectory panel."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from dash import Dash, Input, Output, State, ctx, html, no_update
from dash.exceptions import PreventUpdate

from growthcore.errors import GrowthcoreInputError
from growthcore.figures.common import fit_styles
from growthcore.figures.dynamics import with_forecast_band
from growthcore.uncertainty import forecast

from ... import ids
from ...components.dynamics import fmt
from ...state import current_limits
from .which_fit import done_for, find_fit, fit_signature, rebuild

#: The most steps panel 7 forecasts (each step holds a band of 2,000 draws); a server whose configuration
#: allows fewer forecasts fewer (:func:`step_limit`), a time span included.
MAX_FORECAST_STEPS = 2000


def step_limit() -> int:
    """The most steps a forecast of the answering server may take."""
    return min(MAX_FORECAST_STEPS, current_limits().max_forecast_steps)


def forecast_request(mode: str | None, amount: Any, bound: Any, *, max_steps: int = MAX_FORECAST_STEPS
                     ) -> dict[str, Any]:
    """The user's forecast choice, checked; ``error`` says what is wrong."""
    try:
        value = float(amount)
    except (TypeError, ValueError):
        value = math.nan
    b: float | None
    try:
        b = float(bound) if bound not in (None, "") else None
    except (TypeError, ValueError):
        b = math.nan
    if b is not None and not (math.isfinite(b) and b > 0):
        return {"error": f"The plausibility bound must be a positive state; got {bound!r}."}
    if mode == "span":
        if not (math.isfinite(value) and value > 0):
            return {"error": f"The time span must be a positive number; got {amount!r}."}
        return {"mode": "span", "amount": value, "bound": b}
    if not (math.isfinite(value) and value == int(value) and 1 <= value <= max_steps):
        return {"error": f"Steps ahead must be a whole number from 1 to {max_steps:,}; got {amount!r}."}
    return {"mode": "steps", "amount": int(value), "bound": b}


def compute_forecast(request: Mapping[str, Any], label: str | None, fits_store: Mapping[str, Any] | None,
                     data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                     done: Mapping[str, Any] | None) -> dict[str, Any]:
    """The forecast store: the request, the fit it belongs to and the band (or the reason there is none)."""
    max_steps = step_limit()
    if not request.get("error"):  # a stored request comes back from the tab: checked again here
        request = forecast_request(request.get("mode"), request.get("amount"), request.get("bound"),
                                   max_steps=max_steps)
    out: dict[str, Any] = {"request": dict(request), "label": label, "key": (fits_store or {}).get("key")}
    if request.get("error"):
        return {**out, "error": request["error"]}
    fit = find_fit(fits_store, label)
    if fit is None or fits_store is None or data is None or fit.get("status") != "converged":
        return {**out, "error": "Pick a converged fit to forecast."}
    out["signature"] = fit_signature(fits_store, fit)
    try:
        series, result = rebuild(data, exclusions, fits_store, fit)
        boot = done_for(done, out["signature"])
        steps = request["amount"] if request["mode"] == "steps" else None
        span = request["amount"] if request["mode"] == "span" else None
        fc = forecast(result, steps=steps, span=span, boot=boot, series=series, bound=request.get("bound"),
                      seed=boot.seed if boot is not None else 20240601, max_steps=max_steps)
    except GrowthcoreInputError as exc:
        return {**out, "error": str(exc).splitlines()[0]}
    return {**out, **fc.to_dict(), "last_observed": float(result.t[-1])}


def forecast_is_stale(store: Mapping[str, Any], fits_store: Mapping[str, Any] | None) -> bool:
    """Whether a forecast belongs to other data than the fits on screen."""
    return store.get("key") != (fits_store or {}).get("key")


#: The forecast's "how far" when new data arrive (the component's own default).
DEFAULT_AMOUNT = 10


def fresh_inputs(data: Mapping[str, Any] | None, bound: Any = None, level: Any = None,
                 amount: Any = None) -> tuple[Any, ...]:
    """Outputs on new data (another file or series): no plausibility bound, no level to reach, the default
    forecast length: values typed for the earlier data say nothing about these. A field already at its
    fresh value is left alone, so that panel 7 is not redrawn for nothing."""
    if data is None:
        raise PreventUpdate
    return tuple(no_update if now == fresh else fresh
                 for now, fresh in zip((bound, level, amount), (None, None, DEFAULT_AMOUNT), strict=True))


def forecast_notes(store: Mapping[str, Any] | None, fits_store: Mapping[str, Any] | None) -> list[Any]:
    if not store:
        return [html.P("No forecast drawn. Choose how far ahead and press Draw forecast; the band appears on "
                       "the trajectory panel (3).", className="muted")]
    if store.get("error"):
        return [html.Div(store["error"], className="flag flag-warn")]
    fit = find_fit(fits_store, store.get("label"))
    if fit is None or fits_store is None or fit_signature(fits_store, fit) != store.get("signature"):
        return [html.P("The forecast is being redrawn for the current fit…", className="muted")]
    pts = store.get("points", [])
    last = pts[-1] if pts else {}
    head = (f"{store['label']}: {len(pts)} points to t = {fmt(last.get('t'))}; at the end {fmt(last.get('p'))} "
            f"with a {100 * store.get('level', 0.95):.0f}% prediction band "
            f"{fmt(last.get('lo'))} to {fmt(last.get('hi'))}. "
            f"The band holds the uncertainty of the constants ({store.get('source', '')}) and the residual noise.")
    warnings = [html.Li(w) for w in store.get("warnings", [])]
    return [html.P(head), html.Ul(warnings, className="flag flag-warn dyn-warnings") if warnings else None]


def band_on_trajectory(figure: Mapping[str, Any], store: Mapping[str, Any] | None,
                       fits_store: Mapping[str, Any] | None) -> Mapping[str, Any]:
    """The trajectory figure with the forecast band of the chosen fit, when the band belongs to the
    fits on screen (a drag preview or a changed fit hides it until it is recomputed)."""
    if not store or not store.get("points") or not fits_store:
        return figure
    fits = fits_store.get("fits", [])
    for k, f in enumerate(fits):
        if f.get("label") == store.get("label") and fit_signature(fits_store, f) == store.get("signature"):
            colour = fit_styles(fits, (fits_store.get("settings") or {}).get("models"))[k]["colour"]
            return with_forecast_band(figure, store["points"], colour=colour, name=f"forecast: {f['label']}",
                                      level=store.get("level", 0.95), last_observed=store.get("last_observed"))
    return figure


def register(app: Dash) -> None:
    @app.callback(Output(ids.FORECAST, "data", allow_duplicate=True),
                  Input(ids.FC_RUN, "n_clicks"), Input(ids.FC_CLEAR, "n_clicks"),
                  Input(ids.DYN_FIT, "value"), Input(ids.BOOT_SUMMARY, "data"),
                  State(ids.FC_MODE, "value"), State(ids.FC_AMOUNT, "value"), State(ids.FC_BOUND, "value"),
                  State(ids.FITS, "data"), State(ids.DATA, "data"),
                  State(ids.EXCLUSIONS, "data"), State(ids.BOOT_DONE, "data"), State(ids.FORECAST, "data"),
                  prevent_initial_call=True)
    def _forecast(_run, _clear, label, _summary, mode, amount, bound, fits_store, data, exclusions, done, current):
        trigger = ctx.triggered_id
        if trigger == ids.FC_CLEAR:
            return None
        if trigger == ids.FC_RUN:
            return compute_forecast(forecast_request(mode, amount, bound, max_steps=step_limit()), label, fits_store,
                                    data, exclusions, done)
        # another fit described or a finished bootstrap redraws a forecast already asked for;
        # a forecast of other data (another file or series) is dropped, not carried over
        if current and forecast_is_stale(current, fits_store):
            return None
        if not current:
            raise PreventUpdate
        return compute_forecast(current["request"], label, fits_store, data, exclusions, done)

    # new data clear the fields (fresh_inputs) in app/callbacks/follow.py

    app.callback(Output(ids.FC_NOTES, "children"), Input(ids.FORECAST, "data"),
                 State(ids.FITS, "data"))(lambda store, fits_store: forecast_notes(store, fits_store))


__all__: Sequence[str] = ("forecast_request", "compute_forecast", "forecast_is_stale", "fresh_inputs", "forecast_notes",
                          "band_on_trajectory", "register")
