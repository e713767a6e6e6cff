"""Panel 7: dynamics, bootstrap (chunk by chunk, with progress and cancelling) and the forecast band.

The fits store holds plain data, so the engine's result of the chosen form is rebuilt by fitting it
again (the same engine call with the same inputs gives the same numbers); the fit's signature
(data, points used, K, form, constants) ties every bootstrap and forecast to the fit it belongs to,
so nothing stale is shown after the data, exclusions or K change. New fits redraw this panel in the
same reply as the fits (app/callbacks/live.py).
"""

from __future__ import annotations

import hashlib
import json
import math
import time
from typing import Any, Callable, Mapping, Sequence

from dash import Dash, Input, Output, State, ctx, html, no_update
from dash.exceptions import PreventUpdate

from app import ids
from app.callbacks.explore import labels_of
from app.components.dynamics import (DERIVED_ROWS, MAX_RESAMPLES, correlation_table, derived_table,
                                     equilibria_table, fmt, intervals_table)
from app.figures.common import fit_styles, message_figure, rate_unit
from app.figures.dynamics import cobweb_figure, sweep_figure, with_forecast_band
from app.callbacks.data import server_limits
from app.heavy import direct, runner_of
from app.state import series_from_store
from growthcore.data import Series
from growthcore.dynamics import analyse, cobweb, sweep
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import FitResult
from growthcore.fit.forms import fit_forms
from growthcore.models.base import DifferenceForm
from growthcore.timeaxis import calendar_origin, is_calendar_years, time_point_text
from growthcore.uncertainty import BootstrapResult, bootstrap, derived_intervals, forecast

#: First chunk of a run; later chunks are sized so that each answer takes about TARGET_SECONDS.
FIRST_CHUNK = 50
TARGET_SECONDS = 0.4
MAX_CHUNK = 1000
#: Bootstraps kept per session (one per fit signature), oldest dropped first.
KEEP_DONE = 8
MAX_FORECAST_STEPS = 2000


# ----------------------------------------------------------------------------- which fit

def fit_signature(fits_store: Mapping[str, Any], fit: Mapping[str, Any]) -> str:
    """A short key that changes whenever the data, the points used, K, the form or its constants do."""
    values = {n: p.get("value") for n, p in (fit.get("parameters") or {}).items()}
    text = json.dumps([fits_store.get("key"), fits_store.get("capacity"), fits_store.get("used"), fit.get("label"),
                       fit.get("error"), values, (fits_store.get("settings") or {}).get("terms")],
                      sort_keys=True, default=str)
    return hashlib.sha1(text.encode("utf-8")).hexdigest()[:16]


def find_fit(fits_store: Mapping[str, Any] | None, label: str | None) -> Mapping[str, Any] | None:
    for f in (fits_store or {}).get("fits", []):
        if f.get("label") == label:
            return f
    return None


def choose_fit(fits_store: Mapping[str, Any] | None, current: str | None) -> tuple[list[dict[str, Any]], str | None]:
    """Options of the form picker and its value: the current choice while it exists, else the
    difference form with the best AICc (the cobweb and sweep apply to maps), else the best fit."""
    fits = (fits_store or {}).get("fits", [])
    options = [{"label": f["label"] + ("" if f.get("status") == "converged" else " — failed"), "value": f["label"],
                "disabled": f.get("status") != "converged"} for f in fits]
    good = [f for f in fits if f.get("status") == "converged"]
    if current in {f["label"] for f in good}:
        return options, current
    best = {(r["model"], r["method"], r["error"]) for r in (fits_store or {}).get("comparison", []) if r.get("best")}
    ranked = sorted(good, key=lambda f: ((f["model"], f["method"], f["error"]) not in best,
                                         f["model"].endswith("-curve")))
    return options, (ranked[0]["label"] if ranked else None)


def rebuild(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, fits_store: Mapping[str, Any],
            fit: Mapping[str, Any]) -> tuple[Series, FitResult]:
    """The engine's result behind a plain fit, fitted again from the same inputs (no K profile)."""
    series = series_from_store(data, exclusions)
    settings = fits_store.get("settings") or {}
    results = fit_forms(series, [fit["model"]], method=fit["method"], error=fit.get("error", "additive"),
                        capacity=fits_store.get("capacity"), terms=settings.get("terms", []), profile=False)
    if not results or not results[0].success:
        raise GrowthcoreInputError(f"{fit['label']}: the fit did not converge again: "
                                   f"{results[0].message if results else 'no result'}")
    return series, results[0]


def done_for(done: Mapping[str, Any] | None, signature: str) -> BootstrapResult | None:
    entry = (done or {}).get(signature)
    return BootstrapResult.from_dict(entry["result"]) if entry and entry.get("result") else None


# ----------------------------------------------------------------------------- dynamics and derived times

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


# ----------------------------------------------------------------------------- bootstrap in chunks

def _as_int(x: Any) -> int | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return int(v) if math.isfinite(v) and v == int(v) else None


def start_run(run_clicks: int, cancel_clicks: int | None, resamples: Any, seed: Any, label: str | None,
              fits_store: Mapping[str, Any] | None) -> dict[str, Any]:
    """The bootstrap store for a new run (or for a request that cannot run, with the reason)."""
    n, s = _as_int(resamples), _as_int(seed)
    fit = find_fit(fits_store, label)
    base = {"run": int(run_clicks or 0), "cancel_seen": int(cancel_clicks or 0), "label": label, "done": 0,
            "result": None, "elapsed": 0.0, "computing": 0.0, "started": time.time(), "chunk": FIRST_CHUNK}
    if n is None or not 20 <= n <= MAX_RESAMPLES:
        return {**base, "state": "refused", "message": f"Resamples must be a whole number from 20 to {MAX_RESAMPLES}; "
                                                       f"got {resamples!r}."}
    if s is None or s < 0:
        return {**base, "state": "refused", "message": f"The seed must be a whole number 0 or larger; got {seed!r}."}
    if fit is None or fit.get("status") != "converged" or fits_store is None:
        return {**base, "state": "refused", "message": "Pick a converged fit to bootstrap."}
    return {**base, "state": "running", "requested": n, "seed": s, "signature": fit_signature(fits_store, fit),
            "message": ""}


def _finish(boot: dict[str, Any], done: Mapping[str, Any] | None, state: str, message: str) -> tuple[dict, dict]:
    boot = {**boot, "state": state, "message": message}
    kept = dict(done or {})
    if boot.get("result") and boot["result"].get("samples"):
        kept.pop(boot["signature"], None)
        summary = BootstrapResult.from_dict(boot["result"]).summary()
        kept[boot["signature"]] = {"label": boot["label"], "state": state, "result": boot["result"],
                                   "elapsed": boot.get("elapsed", 0.0), "summary": summary}
        while len(kept) > KEEP_DONE:
            kept.pop(next(iter(kept)))
    return boot, kept


def next_chunk(chunk: int, took: float, requested: int) -> int:
    """Resamples for the next answer: about TARGET_SECONDS of work, and at most a twentieth of the run
    so that progress moves in visible steps and a cancel is heard soon."""
    cap = min(MAX_CHUNK, max(20, requested // 20))
    return int(min(cap, max(10, chunk * TARGET_SECONDS / max(took, 1e-3))))


def bootstrap_chunk(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, fits_store: Mapping[str, Any],
                    fit: Mapping[str, Any], resamples: int, seed: int, start: int, stop: int) -> BootstrapResult:
    """Refits ``start`` .. ``stop − 1`` of a run (the heavy part of :func:`bootstrap_step`)."""
    series, result = rebuild(data, exclusions, fits_store, fit)
    return bootstrap(result, series=series, resamples=resamples, seed=seed, start=start, stop=stop)


def bootstrap_step(boot: Mapping[str, Any] | None, done: Mapping[str, Any] | None, cancel_clicks: int | None,
                   fits_store: Mapping[str, Any] | None, data: Mapping[str, Any] | None,
                   exclusions: Mapping[str, Any] | None, *, run: Any = direct,
                   max_resamples: int = MAX_RESAMPLES) -> tuple[Any, Any, bool]:
    """One chunk of the run in ``boot``. Returns (boot store, done store, whether to ask for another chunk).

    A cancel click seen here (or a change of the fit) ends the run and keeps the refits done so far.
    """
    if not boot or boot.get("state") != "running":
        return no_update, no_update, False
    boot = dict(boot)
    if int(cancel_clicks or 0) > int(boot.get("cancel_seen", 0)):
        return (*_finish(boot, done, "cancelled", f"Cancelled at {boot['done']} of {boot['requested']} resamples."),
                False)
    fit = find_fit(fits_store, boot["label"])
    if fit is None or data is None or fits_store is None or fit_signature(fits_store, fit) != boot["signature"]:
        return (*_finish(boot, done, "stopped", f"The fit changed (data, points, K or settings): the bootstrap "
                                                f"stopped at {boot['done']} of {boot['requested']}; run it again."),
                False)
    t0 = time.perf_counter()
    # the run's numbers come back from the tab: checked against this server's limits every time
    start, n, seed, chunk = (_as_int(boot.get(k)) for k in ("done", "requested", "seed", "chunk"))
    if n is None or not 1 <= n <= max_resamples or start is None or not 0 <= start < n or seed is None \
            or seed < 0 or chunk is None or not 1 <= chunk <= MAX_CHUNK:
        return (*_finish(boot, done, "refused", f"This run asks for more than the server allows (at most "
                                                f"{max_resamples:,} resamples, {MAX_CHUNK:,} per step): refused."),
                False)
    try:
        part = run("the bootstrap step", bootstrap_chunk, data, exclusions, fits_store, fit, n, seed, start,
                   start + chunk)
    except GrowthcoreInputError as exc:
        return (*_finish(boot, done, "failed", str(exc).splitlines()[0]), False)
    if part.done == 0:
        return (*_finish(boot, done, "failed", f"Nothing to resample: {part.message}"), False)
    so_far = BootstrapResult.from_dict(boot["result"]).merge(part) if boot.get("result") else part
    took = time.perf_counter() - t0
    # the time the user waited (wall clock since the run began), not only the server's share of it
    waited = time.time() - float(boot.get("started", time.time() - took))
    boot.update(result=so_far.to_dict(), done=so_far.done, elapsed=max(waited, 0.0),
                computing=float(boot.get("computing", 0.0)) + took, chunk=next_chunk(int(boot["chunk"]), took, n))
    if so_far.done >= n:
        return (*_finish(boot, done, "complete", so_far.message), False)
    return boot, no_update, True


def summaries(done: Mapping[str, Any] | None) -> dict[str, Any]:
    """The finished bootstraps without their refits: counts and intervals, small enough to travel
    with every table update."""
    return {sig: {k: v for k, v in entry.items() if k != "result"} for sig, entry in (done or {}).items()}


def progress_view(boot: Mapping[str, Any] | None, summary: Mapping[str, Any] | None,
                  fits_store: Mapping[str, Any] | None, label: str | None) -> tuple[str, str, Any, Any]:
    """Outputs: progress value and maximum, the status line, the intervals table of the chosen fit."""
    fit = find_fit(fits_store, label)
    if fit is None or fits_store is None or fit.get("status") != "converged":
        status = boot.get("message", "") if boot and boot.get("state") == "refused" else ""
        return "0", "1", status, html.P("No converged fit chosen.", className="muted")
    sig = fit_signature(fits_store, fit)
    running = bool(boot and boot.get("signature") == sig and boot.get("state") == "running")
    info: Mapping[str, Any] | None = None
    if running and boot and boot.get("result"):
        info = BootstrapResult.from_dict(boot["result"]).summary()
    elif not running:
        entry = (summary or {}).get(sig)
        info = entry.get("summary") if entry else None
    value, top = "0", str(boot.get("requested", 1)) if boot else "1"
    status: Any = "Not run for this fit yet: the table shows the t-based intervals only."
    if boot and boot.get("state") == "refused":
        status = boot["message"]
    if running and boot:
        value = str(boot["done"])
        status = (f"Running: {boot['done']} of {boot['requested']} resamples (seed {boot['seed']}), "
                  f"{boot['elapsed']:.1f} s so far. Cancel keeps the refits done.")
    elif info is not None:
        entry = (summary or {}).get(sig, {})
        state = entry.get("state", "complete")
        value, top = str(info["done"]), str(info["requested"])
        words = {"complete": "Done", "cancelled": "Cancelled", "stopped": "Stopped"}.get(state, state.capitalize())
        status = (f"{words}: {info['done']} of {info['requested']} resamples (seed {info['seed']}), "
                  f"{info['succeeded']} refits converged, {info['failed']} failed, in {entry.get('elapsed', 0.0):.1f} s.")
        if info["done"] < info["requested"]:
            status += " The intervals use only the refits done; run again for all of them."
        if info.get("message"):
            status += f" {info['message']}."
        if info.get("notes"):
            status += " " + "; ".join(info["notes"]) + "."
    elif boot and boot.get("state") in ("stopped", "failed", "cancelled") and boot.get("signature") == sig:
        status = boot.get("message", "")
    note = "" if info is None else f", {info['succeeded']} refits" if info["done"] >= info["requested"] else \
        f", partial: {info['done']} of {info['requested']}"
    return value, top, status, intervals_table(fit.get("parameters") or {}, info["intervals"] if info else None, note)


def boot_intervals(summary: Mapping[str, Any] | None, fits_store: Mapping[str, Any] | None) -> dict[tuple, dict]:
    """(model, method, error) → {constant: [lo, hi]} for the fits on screen that have a bootstrap
    (``summary`` as from :func:`summaries`, or the full store of finished bootstraps)."""
    out: dict[tuple, dict] = {}
    for f in (fits_store or {}).get("fits", []):
        if f.get("status") != "converged" or fits_store is None:
            continue
        entry = (summary or {}).get(fit_signature(fits_store, f))
        if entry and entry.get("summary"):
            out[(f["model"], f["method"], f["error"])] = dict(entry["summary"]["intervals"])
    return out


# ----------------------------------------------------------------------------- forecast

def forecast_request(mode: str | None, amount: Any, bound: Any) -> dict[str, Any]:
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
    if not (math.isfinite(value) and value == int(value) and 1 <= value <= MAX_FORECAST_STEPS):
        return {"error": f"Steps ahead must be a whole number from 1 to {MAX_FORECAST_STEPS}; got {amount!r}."}
    return {"mode": "steps", "amount": int(value), "bound": b}


def compute_forecast(request: Mapping[str, Any], label: str | None, fits_store: Mapping[str, Any] | None,
                     data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                     done: Mapping[str, Any] | None) -> dict[str, Any]:
    """The forecast store: the request, the fit it belongs to and the band (or the reason there is none)."""
    if not request.get("error"):  # a stored request comes back from the tab: checked again here
        request = forecast_request(request.get("mode"), request.get("amount"), request.get("bound"))
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
                      seed=boot.seed if boot is not None else 20240601)
    except GrowthcoreInputError as exc:
        return {**out, "error": str(exc).splitlines()[0]}
    return {**out, **fc.to_dict(), "last_observed": float(result.t[-1])}


def forecast_is_stale(store: Mapping[str, Any], fits_store: Mapping[str, Any] | None) -> bool:
    """Whether a forecast belongs to other data than the fits on screen."""
    return store.get("key") != (fits_store or {}).get("key")


#: The forecast's "how far" when new data arrive (the component's own default).
DEFAULT_AMOUNT = 10


def fresh_inputs(data: Mapping[str, Any] | None) -> tuple[Any, Any, Any]:
    """Outputs on new data (another file or series): no plausibility bound, no level to reach, the default
    forecast length: values typed for the earlier data say nothing about these."""
    if data is None:
        raise PreventUpdate
    return None, None, DEFAULT_AMOUNT


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
            f"with a {100 * store.get('level', 0.95):.0f}% prediction band {fmt(last.get('lo'))} to {fmt(last.get('hi'))}. "
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


# ----------------------------------------------------------------------------- wiring

def register(app: Dash) -> None:
    limits = server_limits(app)
    max_resamples = min(MAX_RESAMPLES, limits.max_resamples)
    heavy_run = runner_of(app)
    # new fits (a change of K, the data or the choices) redraw this panel in app/callbacks/live.py; the
    # callbacks here follow the panel's own controls: the fit described, the level, bootstrap and forecast
    @app.callback(Output(ids.DYN_SENTENCES, "children", allow_duplicate=True),
                  Output(ids.DYN_EQUILIBRIA, "children", allow_duplicate=True),
                  Output(ids.G_COBWEB, "figure", allow_duplicate=True), Output(ids.G_SWEEP, "figure", allow_duplicate=True),
                  Output(ids.DYN_DERIVED, "children", allow_duplicate=True),
                  Input(ids.DYN_FIT, "value"), Input(ids.BOOT_SUMMARY, "data"), Input(ids.DYN_LEVEL, "value"),
                  State(ids.FITS, "data"), State(ids.DATA, "data"),
                  State(ids.EXCLUSIONS, "data"), State(ids.BOOT_DONE, "data"), prevent_initial_call=True)
    def _dynamics(label, _summary, level, fits_store, data, exclusions, done):
        return dynamics_view(fits_store, label, data, exclusions, done, level)

    @app.callback(Output(ids.BOOT, "data"), Output(ids.BOOT_DONE, "data"), Output(ids.BOOT_SUMMARY, "data"),
                  Output(ids.BOOT_TICK, "max_intervals"),
                  Input(ids.BOOT_RUN, "n_clicks"), Input(ids.BOOT_TICK, "n_intervals"), Input(ids.BOOT_CANCEL, "n_clicks"),
                  State(ids.BOOT_N, "value"), State(ids.BOOT_SEED, "value"), State(ids.DYN_FIT, "value"),
                  State(ids.FITS, "data"), State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"),
                  State(ids.BOOT, "data"), State(ids.BOOT_DONE, "data"), prevent_initial_call=True)
    def _bootstrap(run, ticks, cancel, resamples, seed, label, fits_store, data, exclusions, boot, done):
        # the timer fires once per answer: each answer allows exactly one more tick (max_intervals)
        trigger = ctx.triggered_id
        if trigger == ids.BOOT_RUN:
            new = start_run(run, cancel, resamples, seed, label, fits_store)
            return new, no_update, no_update, (ticks or 0) + 1 if new["state"] == "running" else no_update
        boot_out, done_out, more = bootstrap_step(boot, done, cancel, fits_store, data, exclusions, run=heavy_run,
                                                  max_resamples=max_resamples)
        summary_out = no_update if done_out is no_update else summaries(done_out)
        return boot_out, done_out, summary_out, (ticks or 0) + 1 if more else (ticks or 0)

    app.callback(*[Output(i, p, allow_duplicate=True) for i, p in ((ids.BOOT_PROGRESS, "value"), (ids.BOOT_PROGRESS, "max"),
                                                                   (ids.BOOT_STATUS, "children"),
                                                                   (ids.DYN_INTERVALS, "children"))],
                 Input(ids.BOOT, "data"), Input(ids.BOOT_SUMMARY, "data"), Input(ids.DYN_FIT, "value"),
                 State(ids.FITS, "data"), prevent_initial_call=True,
                 )(lambda boot, summary, label, fits_store: progress_view(boot, summary, fits_store, label))

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
            return compute_forecast(forecast_request(mode, amount, bound), label, fits_store, data, exclusions, done)
        # another fit described or a finished bootstrap redraws a forecast already asked for;
        # a forecast of other data (another file or series) is dropped, not carried over
        if current and forecast_is_stale(current, fits_store):
            return None
        if not current:
            raise PreventUpdate
        return compute_forecast(current["request"], label, fits_store, data, exclusions, done)

    app.callback(Output(ids.FC_BOUND, "value"), Output(ids.DYN_LEVEL, "value"), Output(ids.FC_AMOUNT, "value"),
                 Input(ids.DATA, "data"), prevent_initial_call=True)(lambda data: fresh_inputs(data))

    app.callback(Output(ids.FC_NOTES, "children"), Input(ids.FORECAST, "data"),
                 State(ids.FITS, "data"))(lambda store, fits_store: forecast_notes(store, fits_store))


__all__: Sequence[str] = ("fit_signature", "choose_fit", "rebuild", "dynamics_view", "start_run",
                          "bootstrap_step", "summaries", "progress_view", "boot_intervals", "forecast_request", "compute_forecast",
                          "forecast_notes", "band_on_trajectory", "register")
