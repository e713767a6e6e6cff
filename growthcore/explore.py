"""What the exploration panels show besides the fits: changes per step and candidate rate terms.

Notes
-----
For a series on a regular grid t_n = t_0 + n·h the change per step is Δp_n = p_{n+1} − p_n for
pairs of observations one grid step apart, and the change per unit time is Δp_n / h. A candidate
rate term g(p; K) is judged by the regression through the origin Δp_n ≈ b·g(p_n; K); its uncentered
R² = 1 − Σ(Δp − b·g)² / ΣΔp² is the usual figure for such a regression (it is not comparable with a
centered R²). Constants other than K (θ of the theta-logistic, A of the Allee form) are found by
the engine's increments fit at the given K.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, replace

import numpy as np

from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.expr import parse_term
from growthcore.fit import FitResult, fit
from growthcore.fit.starts import capacity_guess
from growthcore.models import get_form
from growthcore.models.base import DifferenceForm, ModelForm
from growthcore.models.catalogue import CONSTANT_SUFFIX

Array = np.ndarray

#: Forms whose change per step is not a multiple of a single term: they have no candidate line.
NONLINEAR_ONLY = ("ricker", "beverton-holt")


@dataclass(frozen=True)
class ChangeTable:
    """Pairs of observations one step apart: where each starts, and the change over the step.

    ``index`` is the position of the first observation of each pair in the series; ``used`` says
    whether both ends enter fits (a pair with an excluded end is kept so that it can be shown).
    On an irregular series the pairs are neighbouring observations and ``regular`` is false.
    """

    index: Array
    t: Array
    p: Array
    dt: Array
    dp: Array
    rate: Array
    used: Array
    regular: bool
    h: float | None
    message: str


def change_table(series: Series) -> ChangeTable:
    """The change per step and per unit time for every pair of finite observations one step apart.

    Irregular sampling gives neighbouring observations instead, with a message saying that the
    increments method cannot use them.
    """
    if series.has_replicates:
        return _of_means(series)
    step = series.step()
    finite = np.isfinite(series.p)
    used = series.used
    if step.regular and step.index is not None:
        i = np.flatnonzero((np.diff(step.index) == 1) & finite[:-1] & finite[1:])
        message = step.message
    else:
        i = np.flatnonzero(finite[:-1] & finite[1:])
        message = step.message + "; the change per unit time is shown between neighbouring samples"
    dt = series.t[i + 1] - series.t[i]
    dp = series.p[i + 1] - series.p[i]
    return ChangeTable(
        index=i,
        t=series.t[i],
        p=series.p[i],
        dt=dt,
        dp=dp,
        rate=dp / dt,
        used=used[i] & used[i + 1],
        regular=bool(step.regular),
        h=step.h,
        message=message,
    )


def _of_means(series: Series) -> ChangeTable:
    """The change of the mean per time; ``index`` is each pair's first replicate in ``series``."""
    table = change_table(series.means_per_time())
    _, first = np.unique(series.t, return_index=True)
    return replace(table, index=first[table.index],
                   message=f"{table.message}; the change of the mean at each time "
                           f"({series.replicate_times} time(s) with replicates)")


@dataclass(frozen=True)
class CapacityRange:
    """A starting estimate of K and a range for a slider: from the data's largest value up."""

    estimate: float
    low: float
    high: float


def capacity_range(series: Series) -> CapacityRange:
    """K estimate from the change per step (logistic reasoning) and a slider range around it."""
    p = series.p[series.used]
    top = float(np.max(np.abs(p))) if p.size else 1.0
    top = top if top > 0 else 1.0
    guess = capacity_guess(p, series.t[series.used]) if p.size >= 3 else 1.1 * top
    high = max(3.0 * top, 1.5 * guess)
    return CapacityRange(estimate=float(guess), low=0.0, high=float(high))


@dataclass(frozen=True)
class Candidate:
    """One candidate rate term to regress the change per step on."""

    label: str
    model: str
    terms: tuple[str, ...] = ()


def candidates_for(models: Sequence[str], terms: Sequence[str] = ()) -> tuple[list[Candidate], list[str]]:
    """The single-term candidates behind the chosen forms, and notes on forms that have none.

    A ``+c`` form contributes its base term; each custom term is a candidate on its own; Ricker and
    Beverton–Holt are not linear in any constant and closed-form curves have no change per step.
    Raises ``GrowthcoreInputError`` (an ``ExpressionError``) for a custom term outside the grammar.
    """
    out: list[Candidate] = []
    notes: list[str] = []
    seen: set[tuple[str, tuple[str, ...]]] = set()

    def add(c: Candidate) -> None:
        key = (c.model, c.terms)
        if key not in seen:
            seen.add(key)
            out.append(c)

    for model in models:
        base = model[: -len(CONSTANT_SUFFIX)] if model.endswith(CONSTANT_SUFFIX) else model
        if base == "custom":
            for text in terms:
                add(Candidate(parse_term(text).canonical, "custom", (text,)))
            continue
        form = get_form(base)
        if form.kind != "difference":
            notes.append(f"{model}: a closed-form curve has no change per step; it appears in the fits only")
        elif base in NONLINEAR_ONLY:
            notes.append(f"{model}: not a multiple of one term; its increments fit is nonlinear (see the comparison)")
        elif isinstance(form, DifferenceForm) and form.basis is not None:
            add(Candidate(_term_label(base), base))
    return out, notes


def _term_label(model_id: str) -> str:
    labels = {
        "geometric": "p",
        "logistic": "p·(1 − p/K)",
        "gompertz": "p·ln(K/p)",
        "theta-logistic": "p·(1 − (p/K)^θ)",
        "allee": "p·(1 − p/K)·(p/A − 1)",
    }
    return labels.get(model_id, get_form(model_id).equation)


@dataclass(frozen=True)
class CandidateFit:
    """The regression through the origin of the change per step on one candidate term g(p; K)."""

    candidate: Candidate
    capacity: float | None
    status: str
    message: str
    index: Array = field(default_factory=lambda: np.zeros(0, dtype=int))
    g: Array = field(default_factory=lambda: np.zeros(0))
    dp: Array = field(default_factory=lambda: np.zeros(0))
    #: the state at the start of each step (g is g(p; K) of it)
    p: Array = field(default_factory=lambda: np.zeros(0))
    fitted: Array = field(default_factory=lambda: np.zeros(0))
    slope: float | None = None
    slope_name: str = ""
    slope_se: float | None = None
    slope_ci95: tuple[float, float] | None = None
    r2_uncentered: float | None = None
    shape: dict[str, float] = field(default_factory=dict)
    at_bound: tuple[str, ...] = ()

    @property
    def success(self) -> bool:
        return self.status == "converged"


def candidate_fit(series: Series, candidate: Candidate, capacity: float | None) -> CandidateFit:
    """Regress Δp on g(p; K) through the origin with K held at ``capacity``.

    Uses the engine's increments fit (K fixed, no profile), so slope, standard error, interval and
    uncentered R² are the fit's own numbers.
    """
    form = get_form(candidate.model, terms=candidate.terms)
    uses_k = "K" in form.param_names
    if uses_k and (capacity is None or not math.isfinite(capacity) or capacity <= 0):
        return CandidateFit(candidate, capacity, "failed", "set a positive capacity estimate K")
    result = fit(series, form, method="increments", capacity=capacity if uses_k else None,
                 terms=candidate.terms, profile=False)
    if not result.success:
        return CandidateFit(candidate, capacity, "failed", result.message)
    assert isinstance(form, DifferenceForm) and form.basis is not None
    i = observation_index(series, result) - 1
    x = series.p[i]
    values = result.values
    with np.errstate(all="ignore"):
        g = np.asarray(form.basis(x, values)[0], dtype=float)
    coef = result.parameter(form.linear[0])
    shape = {n: float(values[n]) for n in form.shape if n != "K"}
    metrics = result.metrics
    return CandidateFit(
        candidate=candidate,
        capacity=capacity if uses_k else None,
        status="converged",
        message=result.message,
        index=i,
        g=g,
        dp=series.p[i + 1] - x,
        p=x,
        fitted=coef.value * g,
        slope=coef.value,
        slope_name=coef.name,
        slope_se=coef.se,
        slope_ci95=coef.ci95,
        r2_uncentered=metrics.r2_uncentered if metrics else None,
        shape=shape,
        at_bound=tuple(p.name for p in result.parameters if p.at_bound),
    )


def candidate_column(model: str, p: Array, capacity: float, *, terms: Sequence[str] = (),
                     shape: dict[str, float] | None = None) -> Array:
    """g(p; K) of a form's single term, with other shape constants (θ, A) from ``shape``."""
    form = get_form(model, terms=terms)
    if not isinstance(form, DifferenceForm) or form.basis is None or len(form.linear) != 1:
        raise GrowthcoreInputError(f"{model} has no single rate term to show")
    values = {"K": float(capacity), **(shape or {}), form.linear[0]: 0.0}
    missing = [n for n in form.shape if n not in values]
    if missing:
        raise GrowthcoreInputError(f"{model} needs a value for {', '.join(missing)}")
    with np.errstate(all="ignore"):
        return np.asarray(form.basis(np.asarray(p, dtype=float), values)[0], dtype=float)


def observation_index(series: Series, result: FitResult) -> Array:
    """Position in ``series`` of the observation behind each residual of ``result``."""
    j = np.searchsorted(series.t, result.t)
    j = np.clip(j, 0, len(series) - 1)
    return j.astype(int)


def form_uses_capacity(model: str, terms: Sequence[str] = ()) -> bool:
    """Whether the form has a carrying capacity K to hold at the estimate."""
    form: ModelForm = get_form(model, terms=terms)
    return "K" in form.param_names


def capacity_from_fit(series: Series, models: Sequence[str], terms: Sequence[str] = ()) -> tuple[float | None, str]:
    """K of the first form that has one, fitted freely by the increments method (no profile).

    Returns the value (None when no form has K or the fit fails) and a sentence saying where it came from.
    """
    for model in models:
        form = get_form(model, terms=terms)
        if "K" not in form.param_names:
            continue
        method = "increments" if form.kind == "difference" else "trajectory"
        result = fit(series, form, method=method, terms=terms, profile=False)
        if not result.success:
            return None, f"K not taken: the {model} fit did not converge: {result.message}"
        why = degenerate_capacity(result, series)
        if why:
            return None, f"K not taken from the {model} fit ({method} method): {why}"
        k = float(result.values["K"])
        return k, f"K from the {model} fit ({method} method)" + (
            f"; {flag}" if (flag := capacity_flag(k, series)) else "")
    return None, "none of the chosen forms has a carrying capacity K"


#: How far beyond the data range a K may lie before it is flagged (a factor on the largest value).
FAR_FACTOR = 10.0


def degenerate_capacity(result: FitResult, series: Series) -> str:
    """Why a fitted K cannot serve as an estimate ("" when it can): K or the rate at a bound, no standard
    error for K, a singular Jacobian, a rate that makes the form decline, or K far outside the data."""
    values = result.values
    k = values.get("K", math.nan)
    if not (math.isfinite(k) and k > 0):
        return f"K = {k:g} is not a positive number"
    rate = next((n for n in ("r", "lambda") if n in values), None)
    if rate == "r" and values["r"] <= 0 or rate == "lambda" and values["lambda"] <= 1:
        return f"{rate} = {values[rate]:.4g} makes the form decline, so K is not a level it approaches"
    if any(p.at_bound for p in result.parameters):
        return "a constant ended at its bound"
    if any("singular" in n for n in result.notes) or result.parameter("K").se is None:
        return "the constants are not identifiable (singular Jacobian, no standard error for K)"
    flag = capacity_flag(k, series)
    if flag and k > FAR_FACTOR * 10 * _top(series):
        return flag
    return ""


def capacity_flag(k: float, series: Series) -> str:
    """A warning when K lies far outside the range of the data ("" otherwise)."""
    top = _top(series)
    if top > 0 and (k > FAR_FACTOR * top or k < top / FAR_FACTOR):
        return (f"K = {k:.4g} is far outside the data (largest value {top:.4g}): "
                "the data say little about it")
    return ""


def _top(series: Series) -> float:
    p = series.p[series.used]
    p = p[np.isfinite(p)]
    return float(np.max(np.abs(p))) if p.size else 0.0
