"""Closed-form growth curves in continuous time; p0 is the state at t = 0.

Notes
-----
The inflection-time logistic p(t) = K / (1 + e^(−r·(t − t_mid))) is the logistic curve with p0 replaced
by the time t_mid at which p = K/2; t_mid is on the series' own clock (no time origin), the form in
which published mixed-effects examples let only K vary between replicates.

The Richards curve is parameterised as p(t) = K / (1 + ((K/p0)^ν − 1)·e^(−r·t))^(1/ν), which solves
dp/dt = (r/ν)·p·(1 − (p/K)^ν); ν = 1 gives the logistic curve and ν → 0 the Gompertz curve.
"""

from __future__ import annotations

import numpy as np
from scipy.special import expit

from growthcore.models.base import INF, Array, CurveForm, ParamSpec, Values

K = ParamSpec("K", 0.0, INF, "carrying capacity (upper asymptote)", "state")
R = ParamSpec("r", 0.0, INF, "rate constant per unit time", "per time")
P0 = ParamSpec("p0", 0.0, INF, "state at t = 0", "state")
T_MID = ParamSpec("t_mid", -INF, INF, "time of the inflection, where p = K/2", "time")
NU = ParamSpec("nu", 0.01, 50.0, "shape (1 = logistic, towards 0 = Gompertz)", "-")

# ∂p(t)/∂θ in closed form (E = e^(−r·t) throughout).

def _exponential_partials(t: Array, v: Values) -> dict[str, Array]:
    grow = np.exp(v["r"] * t)
    return {"p0": grow, "r": t * v["p0"] * grow}


def _logistic_partials(t: Array, v: Values) -> dict[str, Array]:
    k, p0 = v["K"], v["p0"]
    e = np.exp(-v["r"] * t)
    d2 = (1.0 + (k / p0 - 1.0) * e) ** 2
    return {"K": (1.0 - e) / d2, "r": k * (k / p0 - 1.0) * t * e / d2, "p0": (k / p0) ** 2 * e / d2}


def _logistic_mid_value(t: Array, v: Values) -> Array:
    # expit keeps e^(−r·(t − t_mid)) from overflowing far before the inflection
    return v["K"] * expit(v["r"] * (t - v["t_mid"]))


def _logistic_mid_partials(t: Array, v: Values) -> dict[str, Array]:
    lag = t - v["t_mid"]
    s = expit(v["r"] * lag)
    slope = v["K"] * s * (1.0 - s)
    return {"K": s, "r": slope * lag, "t_mid": -slope * v["r"]}


def _gompertz_partials(t: Array, v: Values) -> dict[str, Array]:
    k, p0 = v["K"], v["p0"]
    e = np.exp(-v["r"] * t)
    level = np.log(p0 / k)
    p = k * np.exp(level * e)
    return {"K": p / k * (1.0 - e), "r": -p * level * t * e, "p0": p * e / p0}


def _richards_partials(t: Array, v: Values) -> dict[str, Array]:
    k, p0, nu = v["K"], v["p0"], v["nu"]
    e = np.exp(-v["r"] * t)
    q = (k / p0) ** nu
    b = 1.0 + (q - 1.0) * e
    p = k / b ** (1.0 / nu)
    # from ln p = ln K − ln(B)/ν with B = 1 + (q − 1)·E and q = (K/p0)^ν
    return {"K": p * (1.0 - e) / (k * b), "r": p * (q - 1.0) * t * e / (nu * b), "p0": p * q * e / (p0 * b),
            "nu": p * (np.log(b) / nu**2 - e * q * np.log(k / p0) / (nu * b))}


def _monomolecular_partials(t: Array, v: Values) -> dict[str, Array]:
    e = np.exp(-v["r"] * t)
    return {"K": 1.0 - e, "r": (v["K"] - v["p0"]) * t * e, "p0": e}


EXPONENTIAL_CURVE = CurveForm(
    id="exponential-curve",
    title="Exponential curve",
    equation="p(t) = p0·e^(r·t)",
    params=(ParamSpec("r", -INF, INF, "specific growth rate per unit time", "per time"), P0),
    value=lambda t, v: v["p0"] * np.exp(v["r"] * t),
    rate=lambda p, v: v["r"] * p,
    rate_dp=lambda p, v: v["r"] + 0.0 * p,
    value_partials=_exponential_partials,
)

LOGISTIC_CURVE = CurveForm(
    id="logistic-curve",
    title="Logistic curve",
    equation="p(t) = K / (1 + (K/p0 − 1)·e^(−r·t))",
    params=(K, R, P0),
    value=lambda t, v: v["K"] / (1.0 + (v["K"] / v["p0"] - 1.0) * np.exp(-v["r"] * t)),
    rate=lambda p, v: v["r"] * p * (1.0 - p / v["K"]),
    rate_dp=lambda p, v: v["r"] * (1.0 - 2.0 * p / v["K"]),
    value_partials=_logistic_partials,
)

LOGISTIC_MID_CURVE = CurveForm(
    id="logistic-mid-curve",
    title="Logistic curve by its inflection time",
    equation="p(t) = K / (1 + e^(−r·(t − t_mid)))",
    params=(K, R, T_MID),
    value=_logistic_mid_value,
    rate=lambda p, v: v["r"] * p * (1.0 - p / v["K"]),
    rate_dp=lambda p, v: v["r"] * (1.0 - 2.0 * p / v["K"]),
    value_partials=_logistic_mid_partials,
    notes=("t_mid is a time on the series' own clock, not measured from the first observation",),
)

GOMPERTZ_CURVE = CurveForm(
    id="gompertz-curve",
    title="Gompertz curve",
    equation="p(t) = K·exp(ln(p0/K)·e^(−r·t))",
    params=(K, R, P0),
    value=lambda t, v: v["K"] * np.exp(np.log(v["p0"] / v["K"]) * np.exp(-v["r"] * t)),
    rate=lambda p, v: v["r"] * p * np.log(v["K"] / p),
    rate_dp=lambda p, v: v["r"] * (np.log(v["K"] / p) - 1.0),
    value_partials=_gompertz_partials,
    needs_positive=True,
)

RICHARDS_CURVE = CurveForm(
    id="richards-curve",
    title="Richards (generalised logistic) curve",
    equation="p(t) = K / (1 + ((K/p0)^ν − 1)·e^(−r·t))^(1/ν)",
    params=(K, R, P0, NU),
    value=lambda t, v: v["K"]
    / (1.0 + ((v["K"] / v["p0"]) ** v["nu"] - 1.0) * np.exp(-v["r"] * t)) ** (1.0 / v["nu"]),
    rate=lambda p, v: v["r"] / v["nu"] * p * (1.0 - (p / v["K"]) ** v["nu"]),
    rate_dp=lambda p, v: v["r"] / v["nu"] * (1.0 - (v["nu"] + 1.0) * (p / v["K"]) ** v["nu"]),
    value_partials=_richards_partials,
    needs_positive=True,
)

MONOMOLECULAR_CURVE = CurveForm(
    id="monomolecular-curve",
    title="Monomolecular (asymptotic rise) curve",
    equation="p(t) = K − (K − p0)·e^(−r·t)",
    params=(K, R, P0),
    value=lambda t, v: v["K"] - (v["K"] - v["p0"]) * np.exp(-v["r"] * t),
    rate=lambda p, v: v["r"] * (v["K"] - p),
    rate_dp=lambda p, v: -v["r"] + 0.0 * p,
    value_partials=_monomolecular_partials,
)

CURVE_FORMS: tuple[CurveForm, ...] = (
    EXPONENTIAL_CURVE,
    LOGISTIC_CURVE,
    LOGISTIC_MID_CURVE,
    GOMPERTZ_CURVE,
    RICHARDS_CURVE,
    MONOMOLECULAR_CURVE,
)
