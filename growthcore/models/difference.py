"""Difference-equation forms p_{n+1} = p_n + Δ(p_n); every rate constant is per step h.

Notes
-----
Each form gives Δ(p) and dΔ/dp in closed form. The logistic coefficient of p·(K − p) is k = r/K;
the fitting code reports it as a derived quantity.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import replace

import numpy as np

from growthcore.models.base import INF, Array, DifferenceForm, ParamSpec, Values

R_STEP = ParamSpec("r", 0.0, 20.0, "intrinsic growth rate per step", "per step")
K_CAP = ParamSpec("K", 0.0, INF, "carrying capacity", "state")


def _geometric_basis(p: Array, v: Values) -> list[Array]:
    return [p]


def _logistic_basis(p: Array, v: Values) -> list[Array]:
    return [p * (1.0 - p / v["K"])]


def _gompertz_basis(p: Array, v: Values) -> list[Array]:
    return [p * np.log(v["K"] / p)]


def _theta_basis(p: Array, v: Values) -> list[Array]:
    return [p * (1.0 - (p / v["K"]) ** v["theta"])]


def _allee_basis(p: Array, v: Values) -> list[Array]:
    return [p * (1.0 - p / v["K"]) * (p / v["A"] - 1.0)]


def _ricker_map(p: Array, v: Values) -> Array:
    return p * np.exp(v["r"] * (1.0 - p / v["K"]))


def _bh_denominator(p: Array, v: Values) -> Array:
    return 1.0 + (v["lambda"] - 1.0) * p / v["K"]


# f in plain floats for one parameter set (math raises where numpy would give inf or nan; the caller
# falls back to numpy then).

def _geometric_step(v: Mapping[str, float]) -> Callable[[float], float]:
    factor = 1.0 + v["r"]
    return lambda p: factor * p


def _logistic_step(v: Mapping[str, float]) -> Callable[[float], float]:
    r, k = v["r"], v["K"]
    return lambda p: p + r * p * (1.0 - p / k)


def _bh_step(v: Mapping[str, float]) -> Callable[[float], float]:
    lam, slope = v["lambda"], (v["lambda"] - 1.0) / v["K"]
    return lambda p: lam * p / (1.0 + slope * p)


def _ricker_step(v: Mapping[str, float]) -> Callable[[float], float]:
    r, k, exp = v["r"], v["K"], math.exp
    return lambda p: p * exp(r * (1.0 - p / k))


def _gompertz_step(v: Mapping[str, float]) -> Callable[[float], float]:
    r, k, log = v["r"], v["K"], math.log
    return lambda p: p + r * p * log(k / p)


def _theta_step(v: Mapping[str, float]) -> Callable[[float], float]:
    r, k, theta = v["r"], v["K"], v["theta"]
    return lambda p: p + r * p * (1.0 - (p / k) ** theta)


def _allee_step(v: Mapping[str, float]) -> Callable[[float], float]:
    r, k, a = v["r"], v["K"], v["A"]
    return lambda p: p + r * p * (1.0 - p / k) * (p / a - 1.0)


# ∂Δ/∂θ in closed form, for the exact path Jacobian of trajectory fits.

def _geometric_partials(p: Array, v: Values) -> dict[str, Array]:
    return {"r": p}


def _logistic_partials(p: Array, v: Values) -> dict[str, Array]:
    k = v["K"]
    return {"r": p * (1.0 - p / k), "K": v["r"] * (p / k) ** 2}


def _bh_partials(p: Array, v: Values) -> dict[str, Array]:
    lam, k = v["lambda"], v["K"]
    d2 = _bh_denominator(p, v) ** 2
    return {"lambda": p * (1.0 - p / k) / d2, "K": lam * (lam - 1.0) * (p / k) ** 2 / d2}


def _ricker_partials(p: Array, v: Values) -> dict[str, Array]:
    r, k = v["r"], v["K"]
    grown = _ricker_map(p, v)
    return {"r": grown * (1.0 - p / k), "K": grown * r * p / k**2}


def _gompertz_partials(p: Array, v: Values) -> dict[str, Array]:
    return {"r": p * np.log(v["K"] / p), "K": v["r"] * p / v["K"]}


def _theta_partials(p: Array, v: Values) -> dict[str, Array]:
    r, k, theta = v["r"], v["K"], v["theta"]
    q = (p / k) ** theta
    return {"r": p * (1.0 - q), "K": r * p * theta * q / k, "theta": -r * p * q * np.log(p / k)}


def _allee_partials(p: Array, v: Values) -> dict[str, Array]:
    r, k, a = v["r"], v["K"], v["A"]
    crowding, threshold = 1.0 - p / k, p / a - 1.0
    return {"r": p * crowding * threshold, "K": r * p * (p / k**2) * threshold, "A": -r * p * crowding * p / a**2}


GEOMETRIC = DifferenceForm(
    id="geometric",
    title="Geometric (proportional) growth",
    equation="Δp = r·p",
    params=(ParamSpec("r", -1.0, 20.0, "growth rate per step", "per step"),),
    increment=lambda p, v: v["r"] * p,
    increment_dp=lambda p, v: v["r"] + 0.0 * p,
    increment_partials=_geometric_partials,
    scalar_step=_geometric_step,
    linear=("r",),
    basis=_geometric_basis,
)

LOGISTIC = DifferenceForm(
    id="logistic",
    title="Discrete logistic",
    equation="Δp = r·p·(1 − p/K)",
    params=(R_STEP, K_CAP),
    increment=lambda p, v: v["r"] * p * (1.0 - p / v["K"]),
    increment_dp=lambda p, v: v["r"] * (1.0 - 2.0 * p / v["K"]),
    increment_partials=_logistic_partials,
    scalar_step=_logistic_step,
    linear=("r",),
    basis=_logistic_basis,
)

BEVERTON_HOLT = DifferenceForm(
    id="beverton-holt",
    title="Beverton–Holt",
    equation="p_{n+1} = λ·p / (1 + (λ − 1)·p/K)",
    params=(ParamSpec("lambda", 0.0, 1e6, "growth factor per step at low density", "per step"), K_CAP),
    increment=lambda p, v: v["lambda"] * p / _bh_denominator(p, v) - p,
    increment_dp=lambda p, v: v["lambda"] / _bh_denominator(p, v) ** 2 - 1.0,
    increment_partials=_bh_partials,
    scalar_step=_bh_step,
)

RICKER = DifferenceForm(
    id="ricker",
    title="Ricker",
    equation="p_{n+1} = p·exp(r·(1 − p/K))",
    params=(R_STEP, K_CAP),
    increment=lambda p, v: _ricker_map(p, v) - p,
    increment_dp=lambda p, v: np.exp(v["r"] * (1.0 - p / v["K"])) * (1.0 - v["r"] * p / v["K"]) - 1.0,
    increment_partials=_ricker_partials,
    scalar_step=_ricker_step,
)

GOMPERTZ = DifferenceForm(
    id="gompertz",
    title="Discrete Gompertz",
    equation="Δp = r·p·ln(K/p)",
    params=(R_STEP, K_CAP),
    increment=lambda p, v: v["r"] * p * np.log(v["K"] / p),
    increment_dp=lambda p, v: v["r"] * (np.log(v["K"] / p) - 1.0),
    increment_partials=_gompertz_partials,
    scalar_step=_gompertz_step,
    linear=("r",),
    basis=_gompertz_basis,
    needs_positive=True,
)

THETA_LOGISTIC = DifferenceForm(
    id="theta-logistic",
    title="Theta-logistic",
    equation="Δp = r·p·(1 − (p/K)^θ)",
    params=(R_STEP, K_CAP, ParamSpec("theta", 0.05, 20.0, "shape of density dependence", "-")),
    increment=lambda p, v: v["r"] * p * (1.0 - (p / v["K"]) ** v["theta"]),
    increment_dp=lambda p, v: v["r"] * (1.0 - (v["theta"] + 1.0) * (p / v["K"]) ** v["theta"]),
    increment_partials=_theta_partials,
    scalar_step=_theta_step,
    linear=("r",),
    basis=_theta_basis,
    needs_positive=True,
)


def _allee_dp(p: Array, v: Values) -> Array:
    u = p * (1.0 - p / v["K"])
    du = 1.0 - 2.0 * p / v["K"]
    w = p / v["A"] - 1.0
    return v["r"] * (du * w + u / v["A"])


ALLEE = DifferenceForm(
    id="allee",
    title="Logistic with a strong Allee effect",
    equation="Δp = r·p·(1 − p/K)·(p/A − 1)",
    params=(R_STEP, K_CAP, ParamSpec("A", 0.0, INF, "Allee threshold", "state")),
    increment=lambda p, v: v["r"] * p * (1.0 - p / v["K"]) * (p / v["A"] - 1.0),
    increment_dp=_allee_dp,
    increment_partials=_allee_partials,
    scalar_step=_allee_step,
    linear=("r",),
    basis=_allee_basis,
)

DIFFERENCE_FORMS: tuple[DifferenceForm, ...] = (
    GEOMETRIC,
    LOGISTIC,
    BEVERTON_HOLT,
    RICKER,
    GOMPERTZ,
    THETA_LOGISTIC,
    ALLEE,
)

CONSTANT = ParamSpec("c", -INF, INF, "constant change per step: immigration (c > 0) or harvest (c < 0)",
                     "state per step")


def with_constant(form: DifferenceForm) -> DifferenceForm:
    """``form`` with a constant term added to Δp; its id gains the suffix ``+c``."""
    base_basis, base_partials, base_step = form.basis, form.increment_partials, form.scalar_step

    def scalar_step(v: Mapping[str, float]) -> Callable[[float], float]:
        assert base_step is not None
        step, c = base_step(v), v["c"]
        return lambda p: step(p) + c

    def partials(p: Array, v: Values) -> dict[str, Array]:
        known = base_partials(p, v) if base_partials is not None else {}
        return {**known, "c": np.ones_like(p)}

    def basis(p: Array, v: Values) -> list[Array]:
        assert base_basis is not None
        return [*base_basis(p, v), np.ones_like(p)]

    return replace(
        form,
        id=form.id + "+c",
        title=form.title + " with a constant term",
        equation=form.equation + " + c",
        params=(*form.params, CONSTANT),
        increment=lambda p, v: form.increment(p, v) + v["c"],
        increment_dp=form.increment_dp,
        increment_partials=partials,
        scalar_step=scalar_step if base_step is not None else None,
        linear=(*form.linear, "c") if form.basis is not None else (),
        basis=basis if base_basis is not None else None,
    )
