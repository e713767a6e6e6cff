"""Every chosen form fitted to the series; the plain results go to the fits store for the panels
(called by app/callbacks/live.py)."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.compare import compare, comparison_notes
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.plain import fit_to_store
from growthcore.fit import FitResult
from growthcore.workflow import Extras, Plan, fit_plan

from ..state import current_limits, rows_to_store, series_from_store


def held_capacity(settings: Mapping[str, Any], capacity: float | None) -> float | None:
    """The K every fit holds (None when K is fitted), as the fits callback uses it."""
    held = settings.get("k_mode", "fitted") == "held"
    return capacity if held and capacity is not None and capacity > 0 else None


def session_plan(settings: Mapping[str, Any], capacity: float | None, *, forms: Sequence[str] | None = None,
                 extras: Extras | None = None) -> Plan:
    """The plan of the session's choices for the chosen ``forms`` (all when None): K held at ``capacity``
    with no profile when K is held, else fitted and profiled."""
    held = settings.get("k_mode", "fitted") == "held"
    return Plan(models=tuple(m for m in settings.get("models", []) if forms is None or m in forms),
                method=settings.get("method", "increments"), error=settings.get("error", "additive"),
                capacity=held_capacity(settings, capacity), terms=tuple(settings.get("terms", [])),
                profile=not held, extras=extras or Extras())


def session_fits(data: Mapping[str, Any], exclusions: Mapping[str, Any] | None, settings: Mapping[str, Any],
                 capacity: float | None, forms: Sequence[str] | None = None
                 ) -> tuple[Series, list[FitResult], list[str]]:
    """The series and the fits of the chosen ``forms`` (all when None), as the panels show them.

    Returns the fits and a note per form the engine refused (as the comparison notes show it).
    """
    series = series_from_store(data, exclusions)
    fitted = fit_plan(series, session_plan(settings, capacity, forms=forms), skip_refused=True)
    return series, list(fitted.results), list(fitted.refused)


def compute_fits(data: Mapping[str, Any] | None, exclusions: Mapping[str, Any] | None,
                 settings: Mapping[str, Any] | None, capacity: float | None) -> dict[str, Any] | None:
    """The fits store: plain fits, comparison rows and notes, for the given data and choices."""
    if data is None or settings is None:
        return None
    models, methods = settings.get("models") or [], 2 if settings.get("method") == "both" else 1
    most = current_limits().max_fits  # the settings come from the tab: bounded here, by this server's limits
    if len(models) * methods > most:
        raise GrowthcoreInputError(f"{len(models)} forms by {methods} method(s) is over the limit of "
                                   f"{most} fits: refused")
    series, fits, notes = session_fits(data, exclusions, settings, capacity)
    k = held_capacity(settings, capacity)
    rows = compare(fits)
    notes.extend(comparison_notes(fits))
    return {
        "key": data["key"],
        "capacity": k,
        "settings": dict(settings),
        "used": [bool(u) for u in series.used],
        "fits": [fit_to_store(f, series) for f in fits],
        "comparison": rows_to_store(rows),
        "notes": notes,
    }

