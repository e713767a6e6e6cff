"""The plain data the figure builders draw: a fit as JSON-ready data, its label, the quantity's name.

The dashboard keeps these in the browser tab and the report builds them from a record; either way
they are only copies of engine results, with no numerics of their own.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.explore import observation_index
from growthcore.fit import FitResult
from growthcore.numbers import finite_list, finite_or_none

#: Grid steps an increments fit's map is iterated past the last observation when asked to start there
#: (the forecast panel's default reach).
STEPS_AHEAD = 10


def quantity_name(column: str, unit: str) -> str:
    """'Dry weight (g/L)' with unit 'g/L' -> 'Dry weight': the quantity without its unit mark."""
    text = column.strip()
    if unit:
        for left, right in ("()", "[]"):
            mark = f"{left}{unit}{right}"
            if text.endswith(mark):
                return text[: -len(mark)].strip() or text
    return text


def fit_label(result: FitResult | Mapping[str, Any]) -> str:
    model = result["model"] if isinstance(result, Mapping) else result.model
    method = result["method"] if isinstance(result, Mapping) else result.method
    error = result["error"] if isinstance(result, Mapping) else result.error
    extra = ", log error" if method == "trajectory" and error == "log" else ""
    return f"{model} ({method}{extra})"


def fit_label_parts(label: str) -> tuple[str, str]:
    """(form id, error model) back from a :func:`fit_label` such as ``logistic (trajectory, log error)``."""
    return label.split(" (", 1)[0], "log" if label.endswith(", log error)") else "additive"


def fit_to_store(result: FitResult, series: Series, *, t_end: float | None = None) -> dict[str, Any]:
    """What the panels and the table need from one fit, as JSON-ready data."""
    out: dict[str, Any] = {
        "label": fit_label(result),
        "model": result.model,
        "method": result.method,
        "error": result.error,
        "status": result.status,
        "message": result.message,
        "equation": result.form.equation if result.form is not None else "",
        "notes": list(result.notes),
    }
    if not result.success:
        return out
    index = observation_index(series, result)
    out.update(
        parameters={p.name: p.to_dict() for p in result.parameters},
        metrics=result.metrics.to_dict() if result.metrics else None,
        diagnostics=result.diagnostics.to_dict() if result.diagnostics else None,
        index=[int(i) for i in index],
        t=finite_list(result.t),
        observed=finite_list(result.observed),
        predicted=finite_list(result.predicted),
        residuals=finite_list(result.residuals),
        profile_interval=([finite_or_none(v) for v in (*result.profile.interval, *result.profile.interval_lr)]
                          if result.profile is not None else None),
    )
    end = float(series.t[-1]) if t_end is None else float(t_end)
    try:
        path_t, path_p = result.path(end)
        out["path"] = {"t": finite_list(path_t), "p": finite_list(path_p)}
    except (ValueError, ArithmeticError):
        out["path"] = None
    if result.method == "increments" and result.grid is not None and len(result.t):
        try:
            ahead_t, ahead_p = result.iterated_path("last", float(result.t[-1]) + STEPS_AHEAD * result.grid.h)
            out["path_last"] = {"t": finite_list(ahead_t), "p": finite_list(ahead_p)}
        except (ValueError, ArithmeticError, GrowthcoreInputError):
            out["path_last"] = None
    return out
