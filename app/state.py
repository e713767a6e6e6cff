"""Plain-data forms of engine objects for dcc.Store, and back. No numerics here: only copying.

A fit's plain form, its label and the quantity's name are the figure builders' own
(:mod:`growthcore.figures.plain`); this module holds what only the dashboard keeps in the tab.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.plain import quantity_name
from growthcore.io import ImportResult
from growthcore.limits import DEFAULT as DEFAULT_LIMITS
from growthcore.limits import Limits
from growthcore.numbers import finite_list

USER_REASON = "excluded by the user"


def data_to_store(imported: ImportResult, series: Series, *, source: str) -> dict[str, Any]:
    """The chosen series and the import report as JSON-ready data."""
    report = imported.report
    return {
        "key": f"{report.sha256}:{series.name}:{series.time_column}:{series.value_column}",
        "source": source,
        "sha256": report.sha256,
        "name": series.name,
        "t": finite_list(series.t),
        "p": finite_list(series.p),
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


def limits_in(config: Mapping[str, Any]) -> Limits:
    """The limits a server's configuration holds (``create_app(limits=)``), else the defaults."""
    limits = config.get("GROWTHCORE_LIMITS")
    return limits if isinstance(limits, Limits) else DEFAULT_LIMITS


def current_limits() -> Limits:
    """The limits of the server answering this request; the defaults outside a request (a worker process
    is handed its limits instead)."""
    from flask import current_app, has_app_context

    return limits_in(current_app.config) if has_app_context() else DEFAULT_LIMITS


def check_points(n: int, name: object, limits: Limits | None = None) -> None:
    """Refuse a series from the tab with more points than the import would ever have let through."""
    most = (limits or current_limits()).max_points
    if n > most:
        raise GrowthcoreInputError(f"series {name!r} has {n:,} points, over the limit of {most:,} points: refused")


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


def rows_to_store(rows: Sequence[Any]) -> list[dict[str, Any]]:
    return [r.to_dict() for r in rows]
