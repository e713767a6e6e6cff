"""The residual bootstrap of the chosen fit, run chunk by chunk on the ticks of a timer, with progress
and cancelling; finished runs are kept in the tab, one per fit signature."""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from typing import Any

from dash import Dash, Input, Output, State, ctx, html, no_update

from growthcore.errors import GrowthcoreInputError
from growthcore.limits import Limits
from growthcore.uncertainty import BootstrapResult, bootstrap

from ... import ids
from ...components.dynamics import MAX_RESAMPLES, MIN_RESAMPLES, intervals_table
from ...heavy import direct, runner_of
from ...ticks import allow_next_tick, cancel_pressed, seconds_since
from ..data import server_limits
from .which_fit import find_fit, fit_signature, rebuild

#: First chunk of a run; later chunks are sized so that each answer takes about TARGET_SECONDS.
FIRST_CHUNK = 50
TARGET_SECONDS = 0.4
MAX_CHUNK = 1000
#: Bootstraps kept per session (one per fit signature), oldest dropped first.
KEEP_DONE = 8


def resample_limit(limits: Limits) -> int:
    """The most resamples a run of a server with ``limits`` may take."""
    return min(MAX_RESAMPLES, limits.max_resamples)


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
    if n is None or not MIN_RESAMPLES <= n <= MAX_RESAMPLES:
        return {**base, "state": "refused", "message": f"Resamples must be a whole number from {MIN_RESAMPLES} to "
                                                       f"{MAX_RESAMPLES}; got {resamples!r}."}
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
    if cancel_pressed(cancel_clicks, boot.get("cancel_seen", 0)):
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
    waited = seconds_since(boot.get("started", time.time() - took))
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
                  f"{info['succeeded']} refits converged, {info['failed']} failed, "
                  f"in {entry.get('elapsed', 0.0):.1f} s.")
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


def register(app: Dash) -> None:
    max_resamples = resample_limit(server_limits(app))
    heavy_run = runner_of(app)

    @app.callback(Output(ids.BOOT, "data"), Output(ids.BOOT_DONE, "data"), Output(ids.BOOT_SUMMARY, "data"),
                  Output(ids.BOOT_TICK, "max_intervals"),
                  Input(ids.BOOT_RUN, "n_clicks"), Input(ids.BOOT_TICK, "n_intervals"),
                  Input(ids.BOOT_CANCEL, "n_clicks"),
                  State(ids.BOOT_N, "value"), State(ids.BOOT_SEED, "value"), State(ids.DYN_FIT, "value"),
                  State(ids.FITS, "data"), State(ids.DATA, "data"), State(ids.EXCLUSIONS, "data"),
                  State(ids.BOOT, "data"), State(ids.BOOT_DONE, "data"), prevent_initial_call=True)
    def _bootstrap(run, ticks, cancel, resamples, seed, label, fits_store, data, exclusions, boot, done):
        # the timer fires once per answer: each answer allows exactly one more tick (app/ticks.py)
        trigger = ctx.triggered_id
        if trigger == ids.BOOT_RUN:
            new = start_run(run, cancel, resamples, seed, label, fits_store)
            return new, no_update, no_update, allow_next_tick(ticks) if new["state"] == "running" else no_update
        boot_out, done_out, more = bootstrap_step(boot, done, cancel, fits_store, data, exclusions, run=heavy_run,
                                                  max_resamples=max_resamples)
        summary_out = no_update if done_out is no_update else summaries(done_out)
        return boot_out, done_out, summary_out, allow_next_tick(ticks, more)

    app.callback(*[Output(i, p, allow_duplicate=True) for i, p in ((ids.BOOT_PROGRESS, "value"),
                                                                   (ids.BOOT_PROGRESS, "max"),
                                                                   (ids.BOOT_STATUS, "children"),
                                                                   (ids.DYN_INTERVALS, "children"))],
                 Input(ids.BOOT, "data"), Input(ids.BOOT_SUMMARY, "data"), Input(ids.DYN_FIT, "value"),
                 State(ids.FITS, "data"), prevent_initial_call=True,
                 )(lambda boot, summary, label, fits_store: progress_view(boot, summary, fits_store, label))


__all__: Sequence[str] = ("start_run", "next_chunk", "bootstrap_chunk", "bootstrap_step", "summaries", "progress_view",
                          "boot_intervals", "register")
