"""Plain data for pictures of a batch: one panel per series (data, fitted path, status)."""

from __future__ import annotations

from typing import Any

from growthcore.batch.plate import parse_well
from growthcore.batch.runner import BatchResult
from growthcore.budget import BudgetExceeded
from growthcore.errors import GrowthcoreInputError
from growthcore.numbers import finite_list, finite_or_none


def overview_panels(batch: BatchResult, model: str) -> list[dict[str, Any]]:
    """For each series in order: id, group, points (t, p, used), fitted path, status and message."""
    if model not in batch.models:
        raise GrowthcoreInputError(f"{model!r} is not in this batch; it has {', '.join(batch.models)}")
    fits = {f.series: f for f in batch.for_model(model)}
    out = []
    for s in batch.data.series:
        f = fits[s.name]
        r = f.result
        fit_t: list[float] = []
        fit_p: list[float | None] = []
        if r.success:
            try:
                pt, pp = r.path(float(s.t[-1]))
                fit_t = [float(v) for v in pt]
                fit_p = finite_list(pp)
            except BudgetExceeded:
                raise
            except GrowthcoreInputError:
                pass
        out.append({
            "series": s.name, "group": f.group, "t": [float(v) for v in s.t],
            "p": finite_list(s.p), "used": [bool(u) for u in s.used],
            "fit_t": fit_t, "fit_p": fit_p, "status": r.status, "message": r.message,
        })
    return out


def plate_values(batch: BatchResult, model: str, quantity: str) -> dict[str, dict[str, Any]]:
    """Per well id: the value of a constant (``K``) or metric (``aicc``, ``r2``...), and the status.

    Series whose ids are not wells are left out of the result (the plate map cannot place them).
    """
    out: dict[str, dict[str, Any]] = {}
    for f in batch.for_model(model):
        if parse_well(f.series) is None:
            continue
        r = f.result
        value = None
        if r.success:
            if quantity in r.values:
                value = r.values[quantity]
            elif r.metrics is not None and hasattr(r.metrics, quantity):
                value = getattr(r.metrics, quantity)
            else:
                names = [*r.values, "sse", "rmse", "r2", "r2_adjusted", "aic", "aicc", "bic"]
                raise GrowthcoreInputError(
                    f"{model} has no constant or metric {quantity!r}; choose one of {', '.join(names)}")
        out[f.series] = {"value": finite_or_none(value),
                         "status": r.status, "message": r.message}
    return out
