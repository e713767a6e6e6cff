"""Fitting: the increments and trajectory methods behind one entry point, :func:`fit`."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import replace

import numpy as np

from growthcore.budget import check_budget
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.held_k import held_k_refits
from growthcore.fit.increments import fit_increments, solve_increments
from growthcore.fit.problem import Solved
from growthcore.fit.profile import Refit, capacity_profile
from growthcore.fit.result import ERROR_MODELS, METHODS, CapacityProfile, FitResult, ParameterEstimate, failed
from growthcore.fit.trajectory import fit_trajectory, solve_trajectory
from growthcore.models.base import DifferenceForm, ModelForm
from growthcore.models.catalogue import get_form

__all__ = ["fit", "FitResult", "ParameterEstimate", "CapacityProfile", "METHODS", "ERROR_MODELS"]


def fit(
    series: Series,
    model: str | ModelForm,
    *,
    method: str = "trajectory",
    error: str = "additive",
    capacity: float | None = None,
    fixed: Mapping[str, float] | None = None,
    start: Mapping[str, float] | None = None,
    terms: Sequence[str] = (),
    profile: bool = True,
    time_origin: float | None = None,
) -> FitResult:
    """Fit one model form to a series.

    Parameters
    ----------
    series : the data; excluded points are left out.
    model : a form id from the catalogue (``logistic``, ``ricker+c``, ``logistic-curve``, ``custom``...)
        or a form object.
    method : ``increments`` (regression of the change per step) or ``trajectory`` (the whole path).
    error : ``additive`` or ``log`` (multiplicative); the increments method uses additive error.
    capacity : fix K at this estimate; otherwise K is fitted (and profiled when ``profile``).
    fixed : other constants held at given values (``p0`` included).
    start : starting values for the trajectory method; by default they come from the data.
    terms : the rate terms of the ``custom`` form.
    time_origin : the time at which a curve's p0 applies; by default the first time in the series,
        so that calendar times (years, dates) need no shifting. Pass 0.0 for the origin t = 0.

    Returns
    -------
    FitResult whose ``status`` is ``converged`` or ``failed`` with a message; input that makes the
    numbers overflow or degenerate gives a failed result, not an exception. Only arguments outside
    their choices (an unknown method or model id, a bad term) raise ``GrowthcoreInputError``, and
    a time budget that runs out (:class:`~growthcore.budget.BudgetExceeded`, a subclass).
    """
    check_budget()  # every fit is a step of the request that asked for it, closed-form ones too
    if method not in METHODS:
        raise GrowthcoreInputError(f"`method` must be one of {', '.join(METHODS)}; got {method!r}")
    if error not in ERROR_MODELS:
        raise GrowthcoreInputError(f"`error` must be one of {', '.join(ERROR_MODELS)}; got {error!r}")
    form = get_form(model, terms=terms) if isinstance(model, str) else model
    model_id = form.id
    fixed_all = {k: float(v) for k, v in (fixed or {}).items()}
    if capacity is not None:
        if "K" not in form.param_names:
            raise GrowthcoreInputError(f"{model_id} has no carrying capacity K to fix")
        if not (math.isfinite(float(capacity)) and float(capacity) > 0):
            raise GrowthcoreInputError(f"the carrying capacity K must be a finite number above 0; got {capacity!r}")
        fixed_all["K"] = float(capacity)
    allowed = set(form.param_names) | ({"p0"} if form.kind == "difference" and method == "trajectory" else set())
    unknown = sorted(set(fixed_all) - allowed)
    if unknown:
        raise GrowthcoreInputError(f"{model_id} ({method}) has no constant {', '.join(unknown)} to fix; "
                                   f"it has {', '.join(sorted(allowed))}")
    start = dict(start or {})
    terms_t = tuple(terms) if model_id == "custom" else ()
    notes: list[str] = []
    if form.kind == "curve" and method == "increments":
        return failed(model_id, method, error,
                      f"{model_id} is a closed-form curve: fit it with the trajectory method", form=form)
    if method == "increments" and error == "log":
        notes.append("the increments method regresses the change itself: additive error is used")
        error = "additive"

    def run(fixed_now: Mapping[str, float], start_now: Mapping[str, float]) -> FitResult:
        if method == "increments":
            assert form.kind == "difference"
            return fit_increments(series, form, model=model_id, fixed=fixed_now, start=start_now, terms=terms_t)
        return fit_trajectory(series, form, model=model_id, error=error, fixed=fixed_now, start=start_now,
                              terms=terms_t, time_origin=time_origin)

    def refit_with_k(k: float, start_now: Mapping[str, float]) -> Refit:
        fixed_now = {**fixed_all, "K": k}
        if method == "increments":
            assert form.kind == "difference"
            solved = solve_increments(series, form, model=model_id, fixed=fixed_now, start=start_now, terms=terms_t)
        else:
            solved = solve_trajectory(series, form, model=model_id, error=error, fixed=fixed_now, start=start_now,
                                      terms=terms_t, time_origin=time_origin)
        return (solved.sse, solved.values) if isinstance(solved, Solved) else None

    if np.count_nonzero(series.used) < 3:
        return failed(model_id, method, error, f"only {int(series.used.sum())} usable points: a fit needs at least 3",
                      form=form)
    try:
        with np.errstate(all="ignore"):  # numerical trouble is reported through the status, not warnings
            result = run(fixed_all, start)
            if profile and result.success and "K" in result.values and "K" not in fixed_all:
                held = held_k_refits(series, form, fixed_all, refit_with_k) if (
                    method == "increments" and isinstance(form, DifferenceForm)) else None
                prof = capacity_profile(result, held.one, refit_grid=held.grid) if held is not None else \
                    capacity_profile(result, refit_with_k)
                if prof is not None:
                    result = replace(result, profile=prof)
    except (FloatingPointError, OverflowError, ZeroDivisionError, ValueError, ArithmeticError) as exc:
        if isinstance(exc, GrowthcoreInputError):
            raise
        return failed(model_id, method, error, f"numerical failure: {exc}", form=form)
    if method == "increments" and result.diagnostics is not None and result.diagnostics.durbin_watson > 2.5:
        notes.append("negative serial correlation of the increments' residuals is expected when measurement noise "
                     "in p enters both p_n and Δp_n; the trajectory method handles noisy data better")
    if notes:
        result = replace(result, notes=(*notes, *result.notes))
    return result
