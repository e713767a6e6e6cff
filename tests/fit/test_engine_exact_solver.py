"""The exact-Jacobian path of trajectory fits: parameter partials, forward sensitivities and the solver.

External checks: NIST StRD Misra1a and Rat42 (certified values in tests/reference/nist_strd.json)
solved by growthcore.fit.lm.solve_exact from both NIST starting points; scipy.optimize.least_squares
as the reference optimiser for difference-form trajectories. The other checks compare closed forms
with central finite differences (common practice, no single source).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import least_squares

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.lm import solve_exact
from growthcore.fit.sensitivity import _linear_recursion, path_jacobian
from growthcore.fit.simulate import iterate, path_of
from growthcore.models import get_form
from growthcore.models.curves import CURVE_FORMS
from growthcore.models.difference import DIFFERENCE_FORMS, with_constant

REFERENCE_DIR = Path(__file__).resolve().parents[1] / "reference"
NIST = json.loads((REFERENCE_DIR / "nist_strd.json").read_text(encoding="utf-8"))["datasets"]

#: Parameter sets inside each form's stable, positive range (invented).
VALUES = {
    "geometric": {"r": 0.12},
    "logistic": {"r": 0.6, "K": 80.0},
    "beverton-holt": {"lambda": 1.8, "K": 80.0},
    "ricker": {"r": 0.7, "K": 80.0},
    "gompertz": {"r": 0.3, "K": 80.0},
    "theta-logistic": {"r": 0.5, "K": 80.0, "theta": 1.7},
    "allee": {"r": 0.05, "K": 80.0, "A": 5.0},
}
FORMS = [*DIFFERENCE_FORMS, *(with_constant(f) for f in DIFFERENCE_FORMS)]


def _values(form) -> dict[str, float]:
    base = VALUES[form.id.removesuffix("+c")]
    return {**base, "c": 0.4} if form.id.endswith("+c") else dict(base)


@pytest.mark.parametrize("form", FORMS, ids=lambda f: f.id)
def test_increment_partials_match_central_differences(form):
    states = np.linspace(6.0, 120.0, 25)
    values = _values(form)
    partials = form.increment_partials(states, values)
    assert set(partials) == set(form.param_names)
    for name, analytic in partials.items():
        h = 1e-6 * max(abs(values[name]), 1e-3)
        numeric = (form.increment(states, {**values, name: values[name] + h})
                   - form.increment(states, {**values, name: values[name] - h})) / (2 * h)
        np.testing.assert_allclose(analytic, numeric, rtol=1e-6, atol=1e-8, err_msg=f"{form.id}: d/d{name}")


@pytest.mark.parametrize("form", FORMS, ids=lambda f: f.id)
def test_scalar_step_is_the_map(form):
    values = _values(form)
    step = form.scalar_step(values)
    for p in (3.0, 40.0, 95.0):
        assert step(p) == pytest.approx(float(form.next_state(np.array(p), values)), rel=1e-13)


@pytest.mark.parametrize("form", FORMS, ids=lambda f: f.id)
def test_path_jacobian_matches_finite_differences_of_the_path(form):
    values = {**_values(form), "p0": 10.0}  # above the Allee threshold A = 5
    free = (*form.param_names, "p0")
    path = path_of(form, values["p0"], values, 30)
    exact = path_jacobian(form, values, free, path)
    for j, name in enumerate(free):
        h = 1e-6 * abs(values[name])
        up = iterate(form, values["p0"] if name != "p0" else values["p0"] + h, {**values, name: values[name] + h}, 30)
        down = iterate(form, values["p0"] if name != "p0" else values["p0"] - h,
                       {**values, name: values[name] - h}, 30)
        np.testing.assert_allclose(exact[:, j], (up - down) / (2 * h), rtol=1e-5, atol=1e-7,
                                   err_msg=f"{form.id}: {name}")


@pytest.mark.parametrize("form", CURVE_FORMS, ids=lambda f: f.id)
def test_curve_partials_match_central_differences(form):
    t = np.linspace(0.0, 12.0, 30)
    values = {n: {"K": 80.0, "r": 0.5, "p0": 3.0, "nu": 1.7, "t_mid": 6.0}[n] for n in form.param_names}
    partials = form.value_partials(t, values)
    assert set(partials) == set(form.param_names)
    for name, analytic in partials.items():
        h = 1e-6 * abs(values[name])
        numeric = (form.value(t, {**values, name: values[name] + h})
                   - form.value(t, {**values, name: values[name] - h})) / (2 * h)
        assert np.max(np.abs(analytic - numeric)) <= 1e-8 * np.max(np.abs(numeric)), f"{form.id}: d/d{name}"


def test_custom_terms_use_finite_differences_for_capacity():
    form = get_form("custom", terms=["p", "p^2/K"])
    values = {"b1": 0.5, "b2": -0.5, "K": 90.0, "p0": 3.0}
    free = ("b1", "b2", "K", "p0")
    path = path_of(form, 3.0, values, 25)
    exact = path_jacobian(form, values, free, path)
    h = 1e-5
    up = iterate(form, 3.0, {**values, "K": 90.0 + h}, 25)
    down = iterate(form, 3.0, {**values, "K": 90.0 - h}, 25)
    np.testing.assert_allclose(exact[:, 2], (up - down) / (2 * h), rtol=1e-6, atol=1e-9)


@pytest.mark.parametrize("multipliers", [
    np.array([0.5, 0.0, 1.2, 0.9]),            # a zero multiplier: the product route would divide by zero
    np.full(400, 0.1),                        # products below 1e-150
    np.array([-1.5, 0.7, -0.3, 2.0, 1.1]),    # sign changes
], ids=["zero", "underflow", "signs"])
def test_linear_recursion_agrees_with_the_plain_loop(multipliers):
    rng = np.random.default_rng(3)
    forcing = rng.normal(size=(multipliers.size, 2))
    start = np.array([1.0, 0.0])
    expected = [start]
    for a, b in zip(multipliers, forcing, strict=True):
        expected.append(a * expected[-1] + b)
    np.testing.assert_allclose(_linear_recursion(multipliers, forcing, start), np.array(expected),
                               rtol=1e-12, atol=1e-12)


def _curve_evaluation(x_data, y_data, model, gradient):
    def evaluate(b):
        predicted = model(x_data, *b)
        residuals = y_data - predicted
        sse = float(residuals @ residuals)
        if not math.isfinite(sse):
            return None
        return residuals, sse, (lambda: gradient(x_data, *b)), predicted
    return evaluate


def _misra1a(x, b1, b2):
    return b1 * (1 - np.exp(-b2 * x))


def _misra1a_gradient(x, b1, b2):
    e = np.exp(-b2 * x)
    return np.column_stack([1 - e, b1 * x * e])


def _rat42(x, b1, b2, b3):
    return b1 / (1 + np.exp(b2 - b3 * x))


def _rat42_gradient(x, b1, b2, b3):
    e = np.exp(b2 - b3 * x)
    d = 1 + e
    return np.column_stack([1 / d, -b1 * e / d**2, b1 * x * e / d**2])


@pytest.mark.parametrize("name, model, gradient", [
    ("Misra1a", _misra1a, _misra1a_gradient),
    ("Rat42", _rat42, _rat42_gradient),
])
@pytest.mark.parametrize("start", ["start_1", "start_2"])
def test_solver_reaches_nist_certified_values(name, model, gradient, start):
    """NIST StRD certified estimates to 7 digits and the residual sum of squares to 8, from both starts."""
    ds = NIST[name]
    x, y = np.array(ds["x"], float), np.array(ds["y"], float)
    names = sorted(ds["certified"])
    k = len(names)
    outcome = solve_exact(_curve_evaluation(x, y, model, gradient), np.array(ds[start], float),
                          np.full(k, -np.inf), np.full(k, np.inf), max_nfev=1000)
    assert outcome.success, outcome.message
    for value, key in zip(outcome.x, names, strict=True):
        assert value == pytest.approx(ds["certified"][key], rel=1e-7), key
    assert outcome.sse == pytest.approx(ds["residual_sum_of_squares"], rel=1e-8)
    # the returned Jacobian gives NIST's certified standard errors
    jac = gradient(x, *outcome.x)
    cov = np.linalg.inv(jac.T @ jac) * outcome.sse / ds["dof"]
    np.testing.assert_allclose(np.sqrt(np.diag(cov)), [ds["certified_sd"][key] for key in names], rtol=1e-5)


def test_solver_reports_non_finite_start_and_evaluation_limit():
    x = np.linspace(1, 10, 12)
    y = 3 * np.exp(0.2 * x)

    def evaluate(b):
        with np.errstate(all="ignore"):  # the far start overflows on purpose
            predicted = b[0] * np.exp(b[1] * x)
            r = y - predicted
            sse = float(r @ r)
        if not math.isfinite(sse):
            return None
        return r, sse, (lambda: np.column_stack([np.exp(b[1] * x), b[0] * x * np.exp(b[1] * x)])), predicted

    bounds = (np.full(2, -np.inf), np.full(2, np.inf))
    nonfinite = solve_exact(evaluate, np.array([1.0, 500.0]), *bounds, max_nfev=50)
    assert not nonfinite.success and "non-finite" in nonfinite.message
    limited = solve_exact(evaluate, np.array([0.01, 1.0]), *bounds, max_nfev=2)
    assert not limited.success and "evaluation limit" in limited.message
    done = solve_exact(evaluate, np.array([1.0, 0.1]), *bounds, max_nfev=200)
    assert done.success and done.x == pytest.approx([3.0, 0.2], rel=1e-9)


def _invented_path(form_id: str, n: int, seed: int, **values: float) -> Series:
    form = get_form(form_id)
    path = iterate(form, values.pop("p0"), values, n - 1)
    noise = np.exp(np.random.default_rng(seed).normal(0.0, 0.03, n))
    return Series(np.arange(float(n)), path * noise)


@pytest.mark.parametrize("form_id, values, error", [
    ("logistic", {"r": 0.5, "K": 120.0, "p0": 3.0}, "additive"),
    ("beverton-holt", {"lambda": 1.7, "K": 60.0, "p0": 2.0}, "log"),
    ("ricker", {"r": 0.9, "K": 40.0, "p0": 1.5}, "additive"),
    ("theta-logistic", {"r": 0.4, "K": 100.0, "theta": 2.0, "p0": 5.0}, "log"),
    ("gompertz", {"r": 0.25, "K": 70.0, "p0": 4.0}, "additive"),
])
def test_trajectory_fit_matches_scipy_least_squares(form_id, values, error):
    """The same optimum as scipy.optimize.least_squares (trust-region reflective) on the same residuals."""
    series = _invented_path(form_id, 40, seed=7, **dict(values))
    result = fit(series, form_id, method="trajectory", error=error, profile=False)
    assert result.success, result.message
    form = get_form(form_id)
    names = (*form.param_names, "p0")

    def residuals(theta):
        v = dict(zip(names, theta, strict=True))
        path = iterate(form, v["p0"], v, 39)
        return np.log(series.p) - np.log(path) if error == "log" else series.p - path

    lower = [form.spec(n).lower if n != "p0" else 0.0 for n in names]
    upper = [form.spec(n).upper if n != "p0" else np.inf for n in names]
    reference = least_squares(residuals, [values[n] * 1.1 for n in names], bounds=(lower, upper),
                              x_scale="jac", xtol=1e-14, ftol=1e-14, gtol=1e-14)
    assert result.metrics.sse == pytest.approx(2 * reference.cost, rel=1e-8)
    for name, ref in zip(names, reference.x, strict=True):
        assert result.values[name] == pytest.approx(ref, rel=1e-5), name
    # standard errors from the exact Jacobian agree with those from scipy's finite-difference Jacobian
    jac = reference.jac
    cov = np.linalg.inv(jac.T @ jac) * 2 * reference.cost / (series.p.size - len(names))
    for i, name in enumerate(names):
        assert result.parameter(name).se == pytest.approx(math.sqrt(cov[i, i]), rel=1e-4), name


@pytest.mark.parametrize("form_id, values", [
    ("beverton-holt", {"lambda": 1.7, "K": 60.0, "p0": 2.0}),
    ("ricker", {"r": 0.9, "K": 40.0, "p0": 1.5}),
    ("ricker+c", {"r": 0.9, "K": 40.0, "c": 0.3, "p0": 1.5}),
])
def test_nonlinear_increments_fit_matches_scipy_least_squares(form_id, values):
    """Forms not linear in any constant regress p_{n+1} on p_n by the exact-Jacobian solver: the same
    optimum and standard errors as scipy.optimize.least_squares on the same residuals."""
    series = _invented_path(form_id, 40, seed=11, **dict(values))
    result = fit(series, form_id, method="increments", profile=False)
    assert result.success and result.solver == "exact-lm", (result.message, result.solver)
    form = get_form(form_id)
    names = form.param_names
    x, y_next = series.p[:-1], series.p[1:]

    def residuals(theta):
        return y_next - (x + form.increment(x, dict(zip(names, theta, strict=True))))

    lower = [form.spec(n).lower for n in names]
    upper = [form.spec(n).upper for n in names]
    reference = least_squares(residuals, [values[n] * 1.1 for n in names], bounds=(lower, upper),
                              x_scale="jac", xtol=1e-14, ftol=1e-14, gtol=1e-14)
    assert result.metrics.sse == pytest.approx(2 * reference.cost, rel=1e-8)
    for name, ref in zip(names, reference.x, strict=True):
        assert result.values[name] == pytest.approx(ref, rel=1e-5), name
    jac = reference.jac
    cov = np.linalg.inv(jac.T @ jac) * 2 * reference.cost / (x.size - len(names))
    for i, name in enumerate(names):
        assert result.parameter(name).se == pytest.approx(math.sqrt(cov[i, i]), rel=1e-4), name


@pytest.mark.parametrize("form_id, values", [
    ("logistic-curve", {"K": 100.0, "r": 0.6, "p0": 2.0}),
    ("richards-curve", {"K": 100.0, "r": 0.6, "p0": 2.0, "nu": 2.5}),
    ("gompertz-curve", {"K": 100.0, "r": 0.4, "p0": 2.0}),
])
def test_curve_fit_matches_scipy_curve_fit_on_irregular_times(form_id, values):
    """The closed-form Jacobian path reaches scipy.optimize.curve_fit's optimum and standard errors."""
    from scipy.optimize import curve_fit

    form = get_form(form_id)
    rng = np.random.default_rng(2)
    t = np.sort(rng.uniform(0.0, 25.0, 40))
    y = form.value(t, values) * np.exp(rng.normal(0.0, 0.03, t.size))
    result = fit(Series(t, y), form_id, profile=False, time_origin=0.0)
    assert result.success, result.message
    names = form.param_names
    model = lambda tt, *theta: form.value(tt, dict(zip(names, theta, strict=True)))  # noqa: E731
    ref, cov = curve_fit(model, t, y, p0=[values[n] * 1.2 for n in names], maxfev=20000, xtol=1e-14, ftol=1e-14)
    for name, value, var in zip(names, ref, np.diag(cov), strict=True):
        assert result.values[name] == pytest.approx(value, rel=1e-5), name
        assert result.parameter(name).se == pytest.approx(math.sqrt(var), rel=1e-4), name


def test_theta_logistic_path_through_negative_states_gives_nan_not_an_error():
    """A fractional power of a negative state would turn Python floats complex; numpy gives nan."""
    form = get_form("theta-logistic")
    path = path_of(form, 50.0, {"r": 19.0, "K": 10.0, "theta": 0.5}, 6)
    assert path.dtype == float and np.isnan(path[-1])
