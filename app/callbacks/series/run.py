"""The batch run: one chunk of series per tick of a dcc.Interval, in this server process.

Every chunk adds its fits to the fits store in place (a Patch), so the page shows progress and the
user can stop the run.
"""

from __future__ import annotations

import math
import time
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from dash import Dash, Input, Output, Patch, State, html, no_update
from dash.exceptions import PreventUpdate

from growthcore.batch import fit_batch, from_series
from growthcore.batch.table import METRICS, row
from growthcore.batch.views import overview_panels
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.plain import fit_label
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits

from ... import ids
from ...heavy import direct, runner_of
from ...ticks import allow_next_tick, seconds_since, stopped
from ..data import server_limits
from .read import series_from_plain

CHUNK_MIN = 16          # series per tick at least ...
CHUNK_TICKS = 12        # ... and about this many ticks for a large file
PATH_POINTS = 120       # points kept of each fitted path (enough for a panel a few hundred pixels wide)


def methods_of(settings: Mapping[str, Any]) -> list[str]:
    method = settings.get("method", "increments")
    return ["increments", "trajectory"] if method == "both" else [method]


def chunk_size(n: int) -> int:
    return max(CHUNK_MIN, math.ceil(n / CHUNK_TICKS))


def start_run(settings: Mapping[str, Any] | None, batch: Mapping[str, Any] | None,
              previous_job: Mapping[str, Any] | None,
              *, now: float | None = None) -> tuple[Any, ...]:
    """Outputs: job, fits store, progress, tick disabled, tick n_intervals, tick max_intervals."""
    if not batch or not settings:
        raise PreventUpdate
    run = int((previous_job or {}).get("run", 0)) + 1
    n = len(batch["names"])
    size = chunk_size(n)
    job = {
        "run": run, "key": batch["key"], "models": list(settings.get("models", [])),
        "terms": list(settings.get("terms", [])),
        "methods": methods_of(settings), "error": settings.get("error", "additive"), "total": n, "chunk": size,
        "chunks": math.ceil(n / size), "started": time.time() if now is None else now,
    }
    if not job["models"]:
        progress = {"run": run, "done": 0, "error": "Choose at least one form in the Model section first."}
        return job, {"run": run, "chunks": {}}, progress, True, 0, allow_next_tick(0, more=False)
    progress = {"run": run, "done": 0, "chunks_done": 0, "failed": 0, "elapsed": 0.0, "error": None}
    return job, {"run": run, "chunks": {}}, progress, False, 0, allow_next_tick(0)


def _thin(t: Sequence[float], p: Sequence[float | None]) -> tuple[list[float], list[float | None]]:
    if len(t) <= PATH_POINTS:
        return list(t), list(p)
    keep = sorted(set(np.linspace(0, len(t) - 1, PATH_POINTS).round().astype(int).tolist()))
    return [t[i] for i in keep], [p[i] for i in keep]


def fit_chunk(job: Mapping[str, Any], batch: Mapping[str, Any], groups: Mapping[str, Any] | None,
              index: int, limits: Limits = DEFAULT_LIMITS) -> dict[str, Any]:
    """Every form (and method) of the job fitted to chunk ``index`` of the series, as plain data.

    Returns {"labels": [...], "fits": {label: {series id: entry}}, "failed": n} where each entry has
    status, message, the thinned fitted path and the values of every constant and metric.
    """
    size = int(job["chunk"])
    # the job and the series come from the tab: bounded here by the server's own limits
    if len(batch["series"]) > limits.max_series or not 1 <= size <= chunk_size(len(batch["series"])):
        raise GrowthcoreInputError(f"a batch chunk of {size} of {len(batch['series'])} series is not one this server "
                                   "makes: start the run again")
    fits_asked = len(job["models"]) * len(job["methods"])
    if fits_asked > limits.max_fits:
        raise GrowthcoreInputError(f"{fits_asked} fits per series, over the limit of {limits.max_fits}: "
                                   "refused")
    chunk = [series_from_plain(d, limits) for d in batch["series"][index * size:(index + 1) * size]]
    mapping = groups.get("groups", {}) if groups and groups.get("key") == batch.get("key") else {}
    data = from_series(chunk, groups={n: g for n, g in mapping.items()})
    fits: dict[str, dict[str, Any]] = {}
    labels: list[str] = []
    failed = 0
    used = {s.name: int(s.used.sum()) for s in chunk}
    for method in job["methods"]:
        result = fit_batch(data, job["models"], method=method, error=job["error"], terms=job.get("terms", ()),
                           workers=1, chunk_size=max(1, len(chunk)))
        params = sorted({p.name for f in result.fits for p in f.result.parameters})
        for model in result.models:
            panels = {p["series"]: p for p in overview_panels(result, model)}
            for sf in result.for_model(model):
                label = fit_label(sf.result)
                if label not in fits:
                    fits[label] = {}
                    labels.append(label)
                flat = row(sf, params, used.get(sf.series))
                keys = (*params, *(f"{n}_se" for n in params), *METRICS, "durbin_watson", "runs_p")
                values = {k: flat[k] for k in keys if flat.get(k) is not None and k != "n"}
                panel = panels[sf.series]
                fit_t, fit_p = _thin(panel["fit_t"], panel["fit_p"])
                fits[label][sf.series] = {"status": sf.result.status, "message": sf.result.message,
                                          "fit_t": fit_t, "fit_p": fit_p, "values": values}
                failed += 0 if sf.result.success else 1
    return {"labels": labels, "fits": fits, "failed": failed}


def run_tick(n_intervals: int | None, job: Mapping[str, Any] | None, batch: Mapping[str, Any] | None,
             groups: Mapping[str, Any] | None, progress: Mapping[str, Any] | None,
             cancel: Mapping[str, Any] | None, *, now: float | None = None, run: Any = direct,
             limits: Limits = DEFAULT_LIMITS) -> tuple[Any, Any, Any]:
    """One tick: fit the next chunk. Outputs: fits-store Patch, progress, tick max_intervals."""
    if not n_intervals or not job or not batch:
        raise PreventUpdate
    if stopped(cancel, job["run"]):
        raise PreventUpdate
    index = int(n_intervals) - 1
    if index >= int(job["chunks"]):
        raise PreventUpdate
    base = dict(progress) if progress and progress.get("run") == job["run"] else {
        "run": job["run"], "done": 0, "chunks_done": 0, "failed": 0, "elapsed": 0.0, "error": None}
    if batch.get("key") != job.get("key"):
        base["error"] = "The file changed during the run; start it again for the new file."
        return no_update, base, no_update
    try:
        out = run("the batch chunk", fit_chunk, job, batch, groups, index, limits)
    except GrowthcoreInputError as exc:
        base["error"] = str(exc).splitlines()[0]
        return no_update, base, no_update
    patch = Patch()
    patch["chunks"][f"{job['run']}:{index}"] = out
    done = min(int(job["total"]), (index + 1) * int(job["chunk"]))
    base.update(done=done, chunks_done=index + 1, failed=int(base.get("failed", 0)) + out["failed"],
                elapsed=round(seconds_since(job["started"], now), 2))
    return patch, base, allow_next_tick(n_intervals, index + 1 < int(job["chunks"]))


def stop_run(job: Mapping[str, Any] | None) -> tuple[Any, Any]:
    """Outputs: the cancel store and the tick's disabled flag."""
    if not job:
        raise PreventUpdate
    return {"run": job["run"]}, True


def merged_fits(fits: Mapping[str, Any] | None, job: Mapping[str, Any] | None,
                batch: Mapping[str, Any] | None) -> tuple[list[str], dict[str, dict[str, Any]]]:
    """Labels and {label: {series id: entry}} of the current run's chunks (chunks of older runs ignored)."""
    if not fits or not job or not batch or job.get("key") != batch.get("key") or fits.get("run") != job.get("run"):
        return [], {}
    prefix = f"{job['run']}:"
    labels: list[str] = []
    out: dict[str, dict[str, Any]] = {}
    chunks = fits.get("chunks", {})
    for key in sorted((k for k in chunks if k.startswith(prefix)), key=lambda k: int(k.split(":")[1])):
        part = chunks[key]
        for label in part["labels"]:
            if label not in out:
                out[label] = {}
                labels.append(label)
            out[label].update(part["fits"][label])
    return labels, out


def progress_view(job: Mapping[str, Any] | None, progress: Mapping[str, Any] | None,
                  cancel: Mapping[str, Any] | None) -> tuple[str, str, Any, bool]:
    """Outputs: bar value, bar max, status text, Stop disabled."""
    if not job or not progress or progress.get("run") != job.get("run"):
        return "0", "1", "Not fitted yet.", True
    total = int(job["total"])
    done = int(progress.get("done", 0))
    n_forms = len(job["models"]) * len(job["methods"])
    failed = int(progress.get("failed", 0))
    seconds = float(progress.get("elapsed", 0.0))
    failed_text = f"; {failed} fit(s) failed (marked in the grid)" if failed else "; no fit failed"
    if progress.get("error"):
        return str(done), str(total), html.Span([html.Strong("Stopped. "), progress["error"]],
                                                className="batch-error"), True
    if stopped(cancel, job["run"]):
        return (str(done), str(total), f"Stopped by you after {done} of {total} series ({seconds:.1f} s){failed_text}; "
                "the rest are not fitted.", True)
    if done >= total:
        return (str(done), str(total), f"All {total} series fitted with {n_forms} form(s) in {seconds:.1f} s"
                f"{failed_text}.", True)
    return (str(done), str(total),
            f"Fitting … {done} of {total} series × {n_forms} form(s) ({seconds:.1f} s){failed_text}.", False)


def register(app: Dash) -> None:
    run = runner_of(app)
    limits = server_limits(app)

    @app.callback(
        Output(ids.BATCH_JOB, "data"), Output(ids.BATCH_FITS, "data"), Output(ids.BATCH_PROGRESS, "data"),
        Output(ids.BATCH_TICK, "disabled"), Output(ids.BATCH_TICK, "n_intervals"),
        Output(ids.BATCH_TICK, "max_intervals"),
        Input(ids.BATCH_RUN, "n_clicks"),
        State(ids.SETTINGS, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_JOB, "data"),
        prevent_initial_call=True,
    )
    def _start(_n, settings, batch, job):
        return start_run(settings, batch, job)

    @app.callback(
        Output(ids.BATCH_FITS, "data", allow_duplicate=True), Output(ids.BATCH_PROGRESS, "data", allow_duplicate=True),
        Output(ids.BATCH_TICK, "max_intervals", allow_duplicate=True),
        Input(ids.BATCH_TICK, "n_intervals"),
        State(ids.BATCH_JOB, "data"), State(ids.BATCH_SERIES, "data"), State(ids.BATCH_GROUPS, "data"),
        State(ids.BATCH_PROGRESS, "data"), State(ids.BATCH_CANCEL, "data"),
        running=[(Output(ids.BATCH_RUN, "disabled"), True, False)],
        prevent_initial_call=True,
    )
    def _tick(n, job, batch, groups, progress, cancel):
        return run_tick(n, job, batch, groups, progress, cancel, run=run, limits=limits)

    app.callback(
        Output(ids.BATCH_CANCEL, "data"), Output(ids.BATCH_TICK, "disabled", allow_duplicate=True),
        Input(ids.BATCH_STOP, "n_clicks"), State(ids.BATCH_JOB, "data"), prevent_initial_call=True,
    )(lambda _n, job: stop_run(job))

    app.callback(
        Output(ids.BATCH_BAR, "value"), Output(ids.BATCH_BAR, "max"), Output(ids.BATCH_STATUS, "children"),
        Output(ids.BATCH_STOP, "disabled"),
        Input(ids.BATCH_JOB, "data"), Input(ids.BATCH_PROGRESS, "data"), Input(ids.BATCH_CANCEL, "data"),
    )(progress_view)
