"""Fitting several forms the same way: the one place that decides which forms take a fixed K.

The command line and the app both go through :func:`fit_forms`, so a form without a carrying
capacity is fitted (with a note saying the fixed K did not apply) wherever the choice is made.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

from growthcore.data import Series
from growthcore.fit import FitResult, fit
from growthcore.models.base import ModelForm
from growthcore.models.catalogue import get_form


def capacity_for(form: ModelForm, capacity: float | None) -> tuple[float | None, str | None]:
    """The K to hold in ``form`` and, when a K was given that the form has no place for, a note."""
    if capacity is None:
        return None, None
    if "K" in form.param_names:
        return float(capacity), None
    return None, f"{form.id} has no carrying capacity K: fitted without the fixed K = {capacity:g}"


def fit_forms(
    series: Series,
    models: Sequence[str],
    *,
    method: str,
    error: str = "additive",
    capacity: float | None = None,
    terms: Sequence[str] = (),
    profile: bool = False,
) -> list[FitResult]:
    """Fit each form by ``method`` (``increments``, ``trajectory`` or ``both``).

    ``capacity`` holds K at that estimate in every form that has K; the others are fitted as they
    are and carry a note. With ``both``, closed-form curves are fitted by the trajectory method
    only, as they have no change per step. Bad choices raise ``GrowthcoreInputError``; numerical
    trouble is a failed result.
    """
    methods = ("increments", "trajectory") if method == "both" else (method,)
    out: list[FitResult] = []
    for model in models:
        form = get_form(model, terms=terms)
        k, note = capacity_for(form, capacity)
        for m in methods:
            if m == "increments" and len(methods) > 1 and form.kind == "curve":
                continue
            result = fit(series, form, method=m, error=error, capacity=k, terms=terms, profile=profile)
            out.append(replace(result, notes=(note, *result.notes)) if note else result)
    return out
