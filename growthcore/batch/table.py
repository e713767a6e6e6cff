"""The batch as a table: one row per series and form, for CSV and JSON output."""

from __future__ import annotations

from typing import Any

from growthcore.batch.runner import BatchResult, SeriesFit
from growthcore.stats import _json_number

#: Metric columns, in order; all come from :class:`growthcore.stats.Metrics`. ``r2`` is the centered R² of
#: the states; ``r2_uncentered`` the uncentered R² of the regression of Δp (increments fits only).
METRICS: tuple[str, ...] = ("n", "sse", "rmse", "r2", "r2_adjusted", "r2_uncentered", "aic", "aicc", "bic")
LEAD: tuple[str, ...] = ("series", "group", "model", "method", "error", "status", "message", "points_used")


def parameter_names(batch: BatchResult) -> list[str]:
    """Every constant that any form of the batch has, in the order first met."""
    names: list[str] = []
    for f in batch.fits:
        form = f.result.form
        own = [p.name for p in f.result.parameters] or (list(form.param_names) if form is not None else [])
        for n in own:
            if n not in names:
                names.append(n)
    return names


def row(fit: SeriesFit, params: list[str], used: int | None = None) -> dict[str, Any]:
    """One flat row: ids, status and message, each constant and its SE, the metrics, notes."""
    r = fit.result
    out: dict[str, Any] = {
        "series": fit.series, "group": fit.group, "model": r.model, "method": r.method, "error": r.error,
        "status": r.status, "message": r.message, "points_used": used,
    }
    values = {p.name: p for p in r.parameters}
    for n in params:
        p = values.get(n)
        out[n] = _json_number(p.value) if p is not None else None
        out[f"{n}_se"] = _json_number(p.se) if p is not None else None
    for m in METRICS:
        out[m] = _json_number(getattr(r.metrics, m)) if r.metrics is not None else None
    d = r.diagnostics
    out["durbin_watson"] = _json_number(d.durbin_watson) if d is not None else None
    out["runs_p"] = _json_number(d.runs_p) if d is not None else None
    out["notes"] = "; ".join(r.notes)
    out["solver"] = fit.path
    return out


def rows(batch: BatchResult) -> tuple[list[str], list[dict[str, Any]]]:
    """Header and rows; series the import left out get one failed row per form.

    The conditions and covariates of a long file (constant within each series) follow the group, so
    that the table can be analysed by them directly.
    """
    params = parameter_names(batch)
    used = {s.name: int(s.used.sum()) for s in batch.data.series}
    report = batch.data.report
    conditions = list(report.columns_with("condition") + report.columns_with("covariate")) if report else []
    of_series = {s.name: dict(s.conditions) for s in report.series} if report else {}
    body = []
    for f in batch.fits:
        r = row(f, params, used.get(f.series))
        own = of_series.get(f.series, {})
        body.append({**{k: r[k] for k in LEAD[:2]}, **{c: own.get(c) for c in conditions},
                     **{k: v for k, v in r.items() if k not in LEAD[:2]}})
    for name, why in batch.data.not_read:
        for model in batch.models:
            empty = {k: None for k in body[0]} if body else {}
            body.append({**empty, "series": name, "group": batch.data.group_of(name), "model": model,
                         "method": batch.method, "error": batch.error, "status": "failed",
                         "message": f"not read from the file: {why}", "notes": "", "solver": "none"})
    header = [*LEAD[:2], *conditions, *LEAD[2:], *[c for n in params for c in (n, f"{n}_se")], *METRICS,
              "durbin_watson", "runs_p", "notes", "solver"]
    return header, body
