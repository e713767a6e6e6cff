"""Plain-data forms of engine objects for dcc.Store, and back. No numerics here: only copying."""

from __future__ import annotations

import math
from typing import Any, Mapping, Sequence

import numpy as np

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.explore import observation_index
from growthcore.fit import FitResult
from growthcore.io import ImportResult
from growthcore.limits import DEFAULT as LIMITS

USER_REASON = "excluded by the user"
#: Grid steps an increments fit's map is iterated past the last observation when asked to start there
#: (the forecast panel's default reach).
STEPS_AHEAD = 10


def _num(x: float | None) -> float | None:
    return float(x) if x is not None and math.isfinite(float(x)) else None


def _list(a: np.ndarray) -> list[float | None]:
    return [_num(v) for v in np.asarray(a, dtype=float)]


def quantity_name(column: str, unit: str) -> str:
    """'Dry weight (g/L)' with unit 'g/L' -> 'Dry weight': the quantity without its unit mark."""
    text = column.strip()
    if unit:
        for left, right in ("()", "[]"):
            mark = f"{left}{unit}{right}"
            if text.endswith(mark):
                return text[: -len(mark)].strip() or text
    return text


def data_to_store(imported: ImportResult, series: Series, *, source: str) -> dict[str, Any]:
    """The chosen series and the import report as JSON-ready data."""
    report = imported.report
    return {
        "key": f"{report.sha256}:{series.name}:{series.time_column}:{series.value_column}",
        "source": source,
        "sha256": report.sha256,
        "name": series.name,
        "t": _list(series.t),
        "p": _list(series.p),
        "rows": list(series.rows) if series.rows is not None else None,
        "time_unit": series.time_unit,
        "value_unit": series.value_unit,
        "time_column": series.time_column,
        "value_column": series.value_column,
        "quantity": quantity_name(series.value_column, series.value_unit),
        "step": series.step().message,
        "series_names": [s.name for s in imported.series],
        "report": report.to_dict(),
        "report_text": report.to_text(),
    }


def check_points(n: int, name: object) -> None:
    """Refuse a series from the tab with more points than the import would ever have let through."""
    if n > LIMITS.max_points:
        raise GrowthcoreInputError(f"series {name!r} has {n:,} points, over the limit of {LIMITS.max_points:,} "
                                   "points: refused")


def series_from_store(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None = None) -> Series:
    """The Series back from the store, with the user's exclusions when they belong to these data.

    The store comes from the tab: a series longer than the server's point limit is refused.
    """
    check_points(len(data["t"]), data.get("name", "series"))
    excluded: dict[int, str] = {}
    if exclusions and exclusions.get("key") == data.get("key"):
        excluded = {int(k): str(v) for k, v in exclusions.get("excluded", {}).items()}
    p = [math.nan if v is None else v for v in data["p"]]
    return Series(
        t=np.asarray(data["t"], dtype=float),
        p=np.asarray(p, dtype=float),
        name=data.get("name", "series"),
        time_unit=data.get("time_unit", ""),
        value_unit=data.get("value_unit", ""),
        time_column=data.get("time_column", "t"),
        value_column=data.get("value_column", "p"),
        excluded=excluded,
        rows=tuple(data["rows"]) if data.get("rows") else None,
    )


def empty_exclusions(key: str | None) -> dict[str, Any]:
    return {"key": key, "excluded": {}, "history": []}


def toggle_exclusion(state: Mapping[str, Any], key: str, index: int) -> dict[str, Any]:
    """Exclude point ``index`` (or restore it when already excluded), remembering the step for undo."""
    current = dict(state.get("excluded", {})) if state.get("key") == key else {}
    history = list(state.get("history", [])) if state.get("key") == key else []
    history.append(dict(current))
    name = str(int(index))
    if name in current:
        del current[name]
    else:
        current[name] = USER_REASON
    return {"key": key, "excluded": current, "history": history[-50:]}


def restore_exclusion(state: Mapping[str, Any], key: str, index: int | None) -> dict[str, Any]:
    """Restore one point, or every point when ``index`` is None."""
    current = dict(state.get("excluded", {})) if state.get("key") == key else {}
    history = list(state.get("history", [])) if state.get("key") == key else []
    history.append(dict(current))
    if index is None:
        current = {}
    else:
        current.pop(str(int(index)), None)
    return {"key": key, "excluded": current, "history": history[-50:]}


def undo_exclusion(state: Mapping[str, Any]) -> dict[str, Any]:
    history = list(state.get("history", []))
    if not history:
        return dict(state)
    previous = history.pop()
    return {"key": state.get("key"), "excluded": previous, "history": history}


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
        t=_list(result.t),
        observed=_list(result.observed),
        predicted=_list(result.predicted),
        residuals=_list(result.residuals),
        profile_interval=([_num(v) for v in (*result.profile.interval, *result.profile.interval_lr)]
                          if result.profile is not None else None),
    )
    end = float(series.t[-1]) if t_end is None else float(t_end)
    try:
        path_t, path_p = result.path(end)
        out["path"] = {"t": _list(path_t), "p": _list(path_p)}
    except (ValueError, ArithmeticError):
        out["path"] = None
    if result.method == "increments" and result.grid is not None and len(result.t):
        try:
            ahead_t, ahead_p = result.iterated_path("last", float(result.t[-1]) + STEPS_AHEAD * result.grid.h)
            out["path_last"] = {"t": _list(ahead_t), "p": _list(ahead_p)}
        except (ValueError, ArithmeticError, GrowthcoreInputError):
            out["path_last"] = None
    return out


def rows_to_store(rows: Sequence[Any]) -> list[dict[str, Any]]:
    return [r.to_dict() for r in rows]
