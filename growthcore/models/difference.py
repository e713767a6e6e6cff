"""Difference-equation forms p_{n+1} = p_n + Δ(p_n); every rate constant is per step h.

Notes
-----
Each form gives Δ(p) and dΔ/dp in closed form. The logistic coefficient of p·(K − p) is k = r/K;
the fitting code reports it as a derived quantity.
"""

from __future__ import annotations

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


GEOMETRIC = DifferenceForm(
    id="geometric",
    title="Geometric (proportional) growth",
    equation="Δp = r·p",
    params=(ParamSpec("r", -1.0, 20.0, "growth rate per step", "per step"),),
    increment=lambda p, v: v["r"] * p,
    increment_dp=lambda p, v: v["r"] + 0.0 * p,
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
)

RICKER = DifferenceForm(
    id="ricker",
    title="Ricker",
    equation="p_{n+1} = p·exp(r·(1 − p/K))",
    params=(R_STEP, K_CAP),
    increment=lambda p, v: _ricker_map(p, v) - p,
    increment_dp=lambda p, v: np.exp(v["r"] * (1.0 - p / v["K"])) * (1.0 - v["r"] * p / v["K"]) - 1.0,
)

GOMPERTZ = DifferenceForm(
    id="gompertz",
    title="Discrete Gompertz",
    equation="Δp = r·p·ln(K/p)",
    params=(R_STEP, K_CAP),
    increment=lambda p, v: v["r"] * p * np.log(v["K"] / p),
    increment_dp=lambda p, v: v["r"] * (np.log(v["K"] / p) - 1.0),
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

CONSTANT = ParamSpec("c", -INF, INF, "constant change per step: immigration (c > 0) or harvest (c < 0)", "state per step")


def with_constant(form: DifferenceForm) -> DifferenceForm:
    """``form`` with a constant term added to Δp; its id gains the suffix ``+c``."""
    base_basis = form.basis

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
        linear=(*form.linear, "c") if form.basis is not None else (),
        basis=basis if base_basis is not None else None,
    )
