"""Refits of an increments fit with K held, for its K profile, without a full solve's setup.

Notes
-----
A profile refit is the same least squares with K fixed. For a form linear in its other constants it is
a regression through the origin in closed form (the route :func:`growthcore.fit.increments.solve_increments`
takes as well). For a form with one other constant that enters nonlinearly (Ricker's r,
Beverton–Holt's λ) it is a one-constant Gauss–Newton problem, damped as Levenberg–Marquardt, which
is solved here for a whole grid of K at once in (pairs × K) arrays; a single K goes to
:func:`growthcore.fit.lm.solve_exact`, whose stopping rule the grid shares. A refit that settles with
its one constant on a bound is kept: the step that would leave the bound points out of range, so the
bound is the optimum (for r that is "no growth", where the profile of a form that cannot follow a low
K levels off). A K whose refit does not settle, or settles on a bound with several constants free, is
left to the full solve, which tries MINPACK as well (``None`` from :meth:`HeldKRefits.grid`; the single
refit falls back itself).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from growthcore.budget import check_budget
from growthcore.data import Series
from growthcore.fit.increments import pairs_evaluation
from growthcore.fit.lm import ACCEPT_RATIO, solve_exact
from growthcore.fit.problem import is_at_bound
from growthcore.fit.profile import Refit
from growthcore.models.base import DifferenceForm

Array = np.ndarray
#: As in :func:`growthcore.fit.lm.solve_exact`.
FTOL = XTOL = 1e-10
MAX_STEPS = 100


@dataclass(frozen=True)
class HeldKRefits:
    """The pairs of one increments fit and which of the form's constants are left once K is held."""

    form: DifferenceForm
    fixed: Mapping[str, float]  # constants the user fixed, K not among them
    x: Array  # p_n of the consecutive pairs
    y_next: Array  # p_{n+1}
    free: tuple[str, ...]  # the constants a refit solves for
    fallback: Callable[[float, Mapping[str, float]], Refit]  # the full solve, for what is not settled here

    @property
    def linear(self) -> bool:
        """Every constant left is a coefficient of the form's basis: a regression through the origin."""
        return self.form.basis is not None and all(n in self.form.linear for n in self.free)

    @property
    def exact(self) -> bool:
        """The form has no linear coefficients, so the full solve takes exact Levenberg–Marquardt too (the
        others concentrate their coefficients out first, which is the full solve's to do)."""
        return self.form.basis is None or not self.form.linear

    def one(self, k: float, start: Mapping[str, float]) -> Refit:
        """The refit at one K, warm-started from ``start``."""
        if self.linear:
            return self._regression(k)
        fixed = {**self.fixed, "K": k}
        exact = pairs_evaluation(self.form, self.free, fixed, self.x, self.y_next) if self.exact else None
        if exact is None:
            return self.fallback(k, start)
        specs = [self.form.spec(n) for n in self.free]
        x0 = np.array([spec.clip(float(start.get(n, 1.0))) for n, spec in zip(self.free, specs, strict=True)])
        outcome = solve_exact(exact, x0, np.array([spec.lower for spec in specs]),
                              np.array([spec.upper for spec in specs]), max_nfev=100 * (x0.size + 1))
        values = outcome.x.tolist()
        if not outcome.success or len(values) > 1 and any(
                is_at_bound(v, spec) for v, spec in zip(values, specs, strict=True)):
            return self.fallback(k, start)  # the full solve tries MINPACK from here
        # one constant on its bound: the step that would leave it points out of range, so the bound is
        # the optimum (with several, a projected step can stall on a bound short of it)
        return outcome.sse, {**fixed, **dict(zip(self.free, values, strict=True))}

    def grid(self, ks: Array, start: Mapping[str, float]) -> list[Refit]:
        """The refits at every K of ``ks``, all started from ``start``; None where each K is refitted alone
        (:meth:`one`: a regression in closed form costs no more alone, and the scan stops where it may)."""
        if self.linear or len(self.free) != 1 or self.form.increment_partials is None or not self.exact:
            return [None] * len(ks)
        return self._gauss_newton(np.asarray(ks, dtype=float), start)

    def _regression(self, k: float) -> Refit:
        form = self.form
        assert form.basis is not None
        values = {**self.fixed, "K": k}
        with np.errstate(all="ignore"):
            cols = form.basis(self.x, {**values, **{n: 0.0 for n in form.linear if n not in values}})
            target = self.y_next - self.x
            if not np.all(np.isfinite(target)):
                return None
            design = []
            for name, col in zip(form.linear, cols, strict=True):
                if name in self.fixed:
                    target = target - self.fixed[name] * col
                else:
                    design.append(np.broadcast_to(col, self.x.shape))
            if not design:
                sse = float(target @ target)
                return (sse, values) if math.isfinite(sse) else None
            xmat = np.column_stack(design)
            if not np.all(np.isfinite(xmat)):
                return None
            if len(design) == 1:  # one rate: its coefficient in closed form, as lstsq would give it
                column = design[0]
                squares = float(column @ column)
                if not squares > 0.0:
                    return None
                coef = np.array([float(column @ target) / squares])
            else:
                coef, _, rank, _ = np.linalg.lstsq(xmat, target, rcond=None)
                if rank < len(design):
                    return None
            residuals = target - xmat @ coef
            sse = float(residuals @ residuals)
        if not math.isfinite(sse):
            return None
        return sse, {**values, **dict(zip(self.free, (float(c) for c in coef), strict=True))}

    def _gauss_newton(self, ks: Array, start: Mapping[str, float]) -> list[Refit]:
        (name,) = self.free
        spec = self.form.spec(name)
        partials = self.form.increment_partials
        assert partials is not None
        x, y = self.x[:, None], self.y_next[:, None]
        m = ks.size
        theta = np.full(m, spec.clip(float(start.get(name, 1.0))))

        def at(theta: Array) -> tuple[Array, Array, Array]:
            values: dict[str, float | Array] = {**self.fixed, "K": ks[None, :], name: theta[None, :]}
            residuals = np.broadcast_to(y - (x + self.form.increment(x, values)), (x.shape[0], m))
            return residuals, np.einsum("ij,ij->j", residuals, residuals), np.broadcast_to(
                partials(x, values)[name], residuals.shape)

        with np.errstate(all="ignore"):
            res, sse, jac = at(theta)
            a, g = np.einsum("ij,ij->j", jac, jac), np.einsum("ij,ij->j", jac, res)
            scale = np.maximum(a, 1e-300)
            damping, growth = np.full(m, 1e-3), np.full(m, 2.0)
            done = ~(np.isfinite(sse) & np.isfinite(a))
            settled = np.zeros(m, dtype=bool)
            for _ in range(MAX_STEPS):
                check_budget()
                if done.all():
                    break
                trial = np.clip(theta + g / (a + damping * scale), spec.lower, spec.upper)
                step = trial - theta
                predicted = 2.0 * step * g - a * step * step
                newton = np.where(a > 0, g / a, 0.0)
                converged = ~done & (predicted <= FTOL * sse) & (newton * g <= FTOL * sse)
                if converged.any():
                    # the last Gauss–Newton step is kept where it does not raise the sum of squares
                    final = np.where(converged, np.clip(theta + newton, spec.lower, spec.upper), theta)
                    _, f_sse, _ = at(final)
                    better = converged & np.isfinite(f_sse) & (f_sse <= sse)
                    theta, sse = np.where(better, final, theta), np.where(better, f_sse, sse)
                    settled |= converged
                    done |= converged
                tiny = ~done & (np.abs(step) <= XTOL * (np.abs(theta) + XTOL))
                settled |= tiny
                done |= tiny
                if done.all():
                    break
                t_res, t_sse, t_jac = at(np.where(done, theta, trial))
                ratio = np.where(np.isfinite(t_sse) & (predicted > 0), (sse - t_sse) / predicted, -1.0)
                accept = ~done & (ratio >= ACCEPT_RATIO)
                reject = ~done & ~accept
                theta, sse = np.where(accept, trial, theta), np.where(accept, t_sse, sse)
                t_a, t_g = np.einsum("ij,ij->j", t_jac, t_jac), np.einsum("ij,ij->j", t_jac, t_res)
                a, g = np.where(accept, t_a, a), np.where(accept, t_g, g)
                done |= accept & ~np.isfinite(a)
                scale = np.where(accept, np.maximum(scale, a), scale)
                damping = np.where(accept, damping * np.maximum(1.0 / 3.0, 1.0 - (2.0 * ratio - 1.0) ** 3),
                                   np.where(reject, damping * growth, damping))
                growth = np.where(accept, 2.0, np.where(reject, growth * 2.0, growth))
        out: list[Refit] = []
        for j in range(m):
            value, total = float(theta[j]), float(sse[j])
            if not settled[j] or not math.isfinite(total):
                out.append(None)
            else:
                out.append((total, {**self.fixed, "K": float(ks[j]), name: value}))
        return out


def held_k_refits(series: Series, form: DifferenceForm, fixed: Mapping[str, float],
                  fallback: Callable[[float, Mapping[str, float]], Refit]) -> HeldKRefits | None:
    """The refits of the increments fit of ``form`` to ``series`` with K held; None where the fit itself
    could not be made (the profile is only asked for after a successful fit)."""
    if series.has_replicates:
        series = series.means_per_time()
    pairs = series.consecutive
    if isinstance(pairs, str) or "K" not in form.param_names:
        return None
    _, x, y_next = pairs
    free = tuple(n for n in form.param_names if n != "K" and n not in fixed)
    return HeldKRefits(form, {n: v for n, v in fixed.items() if n != "K"}, x, y_next, free, fallback)


__all__ = ["HeldKRefits", "held_k_refits"]
