"""What the chosen fit implies: sentences, equilibria, cobweb, sweep and derived times with intervals
(bootstrap intervals once a bootstrap of this fit has run, t-based before)."""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

from dash import ClientsideFunction, Dash, Input, Output, State, html, no_update

from growthcore.dynamics import analyse, cobweb, sweep
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.common import message_figure, rate_unit
from growthcore.figures.dynamics import cobweb_figure, sweep_figure
from growthcore.models.base import DifferenceForm
from growthcore.timeaxis import calendar_origin, is_calendar_years, time_point_text
from growthcore.uncertainty import derived_intervals

from ... import ids
from ...components.dynamics import DERIVED_ROWS, correlation_table, derived_table, equilibria_table
from ..explore import labels_of
from .which_fit import done_for, find_fit, fit_signature, rebuild


def _units(data: Mapping[str, Any]) -> dict[str, str]:
    vu, tu = data.get("value_unit", ""), data.get("time_unit", "")
    return {"time": tu, "state": vu, "rate": rate_unit(vu, tu), "per-time": f"per {tu}" if tu else "", "": ""}


def axis_point_text(data: Mapping[str, Any]) -> Callable[[float | None], str]:
    """How a moment on this series' time axis is written: a date from the imported dates' origin,
    a year on a calendar-year axis, else t = … in the axis unit."""
    notes = (data.get("report") or {}).get("notes", [])
    origin = calendar_origin(notes)
    unit = data.get("time_unit", "")
    years = is_calendar_years([v for v in data.get("t", []) if v is not None], unit)
    return lambda t: time_point_text(t, unit, origin=origin, calendar_years=years)


def _derived_rows(derived: Mapping[str, Any], level: float | None) -> list[tuple[str, str, str]]:
    rows = list(DERIVED_ROWS)
    if level is not None:
        rows.append((f"time_to_level_{level:g}", f"Time to reach {level:g}", "time"))
    rows += [(k, f"Time to reach {k.split('_')[2].replace('pct', '%')} of K", "time")
             for k in derived if k.startswith("time_to_") and k.endswith("pct_K")]
    return rows


def dynamics_view(fits_store: Mapping[str, Any] | None, label: str | None,
                  data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                  done: Mapping[str, Any] | None, level: float | None) -> tuple[Any, ...]:
    """Outputs: sentences, equilibria table, cobweb figure, sweep figure, derived table."""
    fit = find_fit(fits_store, label)
    if data is None or fits_store is None or fit is None or fits_store.get("key") != data.get("key"):
        blank = message_figure("Fit at least one form to see what it implies.")
        return [html.P("No converged fit to describe yet.", className="muted")], [], blank, blank, []
    try:
        series, result = rebuild(data, exclusions, fits_store, fit)
    except GrowthcoreInputError as exc:
        blank = message_figure("This fit cannot be described.")
        return [html.P(str(exc).splitlines()[0], className="flag flag-warn")], [], blank, blank, []
    boot = done_for(done, fit_signature(fits_store, fit))
    usable = boot if boot is not None and boot.ok.sum() >= 20 else None
    dyn = analyse(result, samples=usable.good() if usable is not None else None)
    labels = {**labels_of(data), "rate_unit": "per step"}
    unit = data.get("value_unit", "")
    sentences: list[Any] = [html.P(s, className="dyn-sentence") for s in (dyn.sentences if dyn else ())]
    if dyn is not None and dyn.long_run.kind == "chaos" and dyn.long_run.lyapunov is not None:
        sentences.append(html.P(f"Lyapunov exponent {dyn.long_run.lyapunov:.3g} per step.", className="muted"))
    if usable is None:
        sentences.append(html.P("Intervals here are t-based until a bootstrap of this fit has run.", className="muted"))
    form = result.form
    equilibria = dyn.equilibria if dyn else ()
    if isinstance(form, DifferenceForm):
        top = max([float(v) for v in result.observed if math.isfinite(v)] + [float(e["value"]) for e in equilibria
                   if e.get("value") is not None and math.isfinite(e["value"])] + [float(result.values.get("K", 0.0))])
        web = cobweb(form, result.values, result.start_level, upper=1.3 * top if top > 0 else 1.0,
                     equilibria=equilibria).to_dict()
        rate = dyn.rate_parameter if dyn else None
        interval = usable.interval(rate) if usable is not None and rate in usable.names else None
        sw = sweep(result, interval=interval)
        cobweb_fig = cobweb_figure(web, labels)
        sweep_fig = sweep_figure(sw.to_dict() if sw else None, labels)
    else:
        cobweb_fig = message_figure(f"{fit['label']} is a closed-form curve: the cobweb applies to difference "
                                    "equations.")
        sweep_fig = message_figure("The sweep applies to difference equations with a rate constant.")
    derived = derived_intervals(result, usable, levels=[level] if level is not None and level > 0 else [])
    lv = level if level is not None and level > 0 else None
    table = derived_table(derived, _derived_rows(derived, lv), _units(data), usable is not None,
                          point_text=axis_point_text(data), not_defined=result.derived.get("not_defined"))
    free = [p.name for p in result.parameters if not p.fixed]
    correlations = result.correlation.tolist() if result.correlation is not None else None
    return sentences, equilibria_table(equilibria, unit), cobweb_fig, sweep_fig, [
        table, html.P("The caution under Forecast applies to these times as well: they are read from the fitted law.",
                      className="hint"), correlation_table(free, correlations)]


def register(app: Dash) -> None:
    # new fits (a change of K, the data or the choices) redraw this panel in app/callbacks/live.py; the
    # callback here follows the panel's own controls: the fit described, the level and a finished bootstrap.
    # Off screen the panel is only marked stale (its cobweb and sweep are the page's costliest figures)
    @app.callback(Output(ids.DYN_SENTENCES, "children", allow_duplicate=True),
                  Output(ids.DYN_EQUILIBRIA, "children", allow_duplicate=True),
                  Output(ids.G_COBWEB, "figure", allow_duplicate=True),
                  Output(ids.G_SWEEP, "figure", allow_duplicate=True),
                  Output(ids.DYN_DERIVED, "children", allow_duplicate=True),
                  Output(ids.DYN_STALE, "data", allow_duplicate=True),
                  Input(ids.DYN_FIT, "value"), Input(ids.BOOT_SUMMARY, "data"), Input(ids.DYN_LEVEL, "value"),
                  State(ids.FITS, "data"), State(ids.DATA, "data"),
                  State(ids.EXCLUSIONS, "data"), State(ids.BOOT_DONE, "data"), State(ids.DYN_VISIBLE, "data"),
                  prevent_initial_call=True)
    def _dynamics(label, _summary, level, fits_store, data, exclusions, done, visible):
        if not visible:
            return (*(no_update,) * 5, True)
        return (*dynamics_view(fits_store, label, data, exclusions, done, level), False)

    # the panel coming into view while it describes older fits, or marked stale while in view: the browser
    # decides (assets/live.js), so that a stale mark off screen costs no request
    app.clientside_callback(ClientsideFunction(namespace="growthcore_live", function_name="drawWhenSeen"),
                            Output(ids.DYN_DRAW, "data"), Input(ids.DYN_VISIBLE, "data"), Input(ids.DYN_STALE, "data"),
                            prevent_initial_call=True)

    @app.callback(
        Output(ids.DYN_STALE, "data", allow_duplicate=True),
        Output(ids.DYN_SENTENCES, "children", allow_duplicate=True),
        Output(ids.DYN_EQUILIBRIA, "children", allow_duplicate=True),
        Output(ids.G_COBWEB, "figure", allow_duplicate=True), Output(ids.G_SWEEP, "figure", allow_duplicate=True),
        Output(ids.DYN_DERIVED, "children", allow_duplicate=True),
        Input(ids.DYN_DRAW, "data"),
        State(ids.FITS, "data"), State(ids.DYN_FIT, "value"), State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"),
        State(ids.BOOT_DONE, "data"), State(ids.DYN_LEVEL, "value"),
        prevent_initial_call=True,
    )
    def _in_view(_draw, fits_store, label, data, exclusions, done, level):
        return (False, *dynamics_view(fits_store, label, data, exclusions, done, level))


__all__: Sequence[str] = ("axis_point_text", "dynamics_view", "register")
