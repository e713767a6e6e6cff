"""Exact derivatives of a difference form's path with respect to its constants.

Differentiating p_{n+1} = f(p_n; θ) gives the forward sensitivities

    s_{n+1} = f'(p_n)·s_n + ∂Δ/∂θ(p_n),    s_0 = ∂p_0/∂θ,

so one pass along the path yields the Jacobian that finite differences would need one or two extra
paths per constant for, and without their truncation error.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from growthcore.models.base import DifferenceForm

Array = np.ndarray

#: Relative step of the central difference for a constant the form has no closed-form partial for.
PARTIAL_STEP = np.finfo(float).eps ** (1.0 / 3.0)
SAFE_PRODUCT_LOW, SAFE_PRODUCT_HIGH = 1e-150, 1e150


def path_jacobian(form: DifferenceForm, values: Mapping[str, float], free: Sequence[str], path: Array) -> Array:
    """d p_n / d θ for n = 0..N along ``path`` (its states p_0..p_N), one column per free constant.

    ``p0`` may be among ``free``; every other name must be a constant of ``form``. Runs under the
    caller's ``np.errstate``: a path near overflow gives inf or nan entries, which callers check.
    """
    states = path[:-1]
    multiplier = 1.0 + form.increment_dp(states, values)
    known = form.increment_partials(states, values) if form.increment_partials is not None else {}
    zero = np.zeros(states.shape)
    forcing = np.array([
        zero if name == "p0" else known[name] if name in known else central_partial(form, states, values, name)
        for name in free
    ]).T
    return _linear_recursion(multiplier, forcing, np.array([1.0 if name == "p0" else 0.0 for name in free]))


def _linear_recursion(a: Array, b: Array, s0: Array) -> Array:
    """s_{n+1} = a_n·s_n + b_n from s_0, for every column of ``b`` at once.

    With P_n = a_0···a_{n−1} the solution is s_n = P_n·(s_0 + Σ_{m<n} b_m / P_{m+1}), three numpy
    calls instead of a Python loop; the loop is kept for multipliers whose products leave the safe
    range (a zero multiplier, or products beyond 1e±150 that would lose the division's accuracy).
    """
    out = np.empty((a.size + 1, b.shape[1]))
    out[0] = s0
    if a.size == 0:
        return out
    products = a.cumprod()[:, None]
    size = np.abs(products)
    if size.min() > SAFE_PRODUCT_LOW and size.max() < SAFE_PRODUCT_HIGH:
        cumulative = (b / products).cumsum(axis=0)
        cumulative += s0
        np.multiply(products, cumulative, out=out[1:])
        return out
    s = s0.tolist()
    rows = b.tolist()
    for n, (an, bn) in enumerate(zip(a.tolist(), rows, strict=True), start=1):
        s = [an * si + bi for si, bi in zip(s, bn, strict=True)]
        out[n] = s
    return out


def central_partial(form: DifferenceForm, states: Array, values: Mapping[str, float], name: str) -> Array:
    h = PARTIAL_STEP * max(abs(values[name]), 1e-3)
    up = form.increment(states, {**values, name: values[name] + h})
    down = form.increment(states, {**values, name: values[name] - h})
    return (up - down) / (2.0 * h)
