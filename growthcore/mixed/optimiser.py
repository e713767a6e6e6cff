"""Estimation: Lindstrom–Bates alternation, then (ML) the Laplace approximation maximised directly.

Lindstrom & Bates (1990, Biometrics 46:673) alternate a penalised nonlinear least-squares (PNLS) step,
which finds β and the series' deviations b_i for the current relative covariance D, with a linear
mixed-effects (LME) step, which re-estimates D from the model linearised at those values. Under ML
the alternation's fixpoint is then polished by maximising the Laplace approximation of the marginal
likelihood over (β, D) with the conditional modes solved inside (Pinheiro & Bates 2000, §7.1.2);
that approximation is exact when the random effects enter the curve linearly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import minimize, minimize_scalar

from growthcore.budget import check_budget
from growthcore.mixed.covariance import n_theta, relative_cov
from growthcore.mixed.design import MixedDesign
from growthcore.mixed.likelihood import LinearFit, Working, laplace_neg2ll, linear_fit, working

Array = np.ndarray
#: Bounds of the log-Cholesky diagonal of D = Ψ/σ²: e^−12 relative SD is zero for every practical purpose.
LOG_SD_BOUNDS = (-12.0, 8.0)


@dataclass(frozen=True)
class Estimate:
    """Where the optimiser ended: the estimates and how it got there."""

    beta: Array
    b: Array
    theta: Array
    sigma2: float
    neg2ll: float
    iterations: int
    converged: bool
    message: str
    polished: bool


def _lin(design: MixedDesign, F: Array) -> tuple[Array, Array]:
    return np.einsum("mnp,mpk->mnk", F, design.A), np.einsum("mnp,pq->mnq", F, design.B)


def _penalised(design: MixedDesign, h: Array, b: Array, Dinv: Array) -> float:
    r = (design.y - h) * design.mask
    value = float(np.sum(r * r) + np.einsum("mq,qr,mr->", b, Dinv, b))
    return value if math.isfinite(value) else math.inf


def pnls(design: MixedDesign, beta: Array, b: Array, Dinv: Array, *, fixed_beta: bool = False,
         max_iter: int = 60, tol: float = 1e-13) -> tuple[Array, Array, float, bool]:
    """Minimise Σ‖y_i − f(φ_i)‖² + b_i'D⁻¹b_i by Gauss–Newton with step halving.

    With ``fixed_beta`` only the b_i move: the conditional modes of the Laplace approximation.
    Returns (β, b, objective, converged).
    """
    h, F = design.evaluate(design.constants(beta, b))
    obj = _penalised(design, h, b, Dinv)
    if not math.isfinite(obj):
        return beta, b, obj, False
    for _ in range(max_iter):
        check_budget()
        X, Z = _lin(design, F)
        r = (design.y - h) * design.mask
        ZtZ = np.einsum("mnq,mnr->mqr", Z, Z)
        rb = np.einsum("mnq,mn->mq", Z, r) - b @ Dinv
        Minv = np.linalg.inv(ZtZ + Dinv)
        if fixed_beta:
            d_beta = np.zeros_like(beta)
            db = np.einsum("mqr,mr->mq", Minv, rb)
        else:
            XtX = np.einsum("mnk,mnl->kl", X, X)
            XtZ = np.einsum("mnk,mnq->mkq", X, Z)
            XZM = np.einsum("mkq,mqr->mkr", XtZ, Minv)
            S = XtX - np.einsum("mkr,mlr->kl", XZM, XtZ)
            g = np.einsum("mnk,mn->k", X, r) - np.einsum("mkr,mr->k", XZM, rb)
            d_beta = np.linalg.lstsq(S, g, rcond=None)[0]
            db = np.einsum("mqr,mr->mq", Minv, rb - np.einsum("mkq,k->mq", XtZ, d_beta))
        step = 1.0
        for _halving in range(30):
            beta_new, b_new = beta + step * d_beta, b + step * db
            h_new, F_new = design.evaluate(design.constants(beta_new, b_new))
            obj_new = _penalised(design, h_new, b_new, Dinv)
            if obj_new <= obj:
                break
            step *= 0.5
        else:
            return beta, b, obj, obj < math.inf  # no descent left: at the minimum to rounding
        gain = obj - obj_new
        beta, b, h, F, obj = beta_new, b_new, h_new, F_new, obj_new
        if gain <= tol * max(obj, 1e-300):
            return beta, b, obj, True
    return beta, b, obj, False


def linearised(design: MixedDesign, beta: Array, b: Array) -> Working:
    """The LME step's linear model at (β, b): w = y − f + X·β + Z·b."""
    h, F = design.evaluate(design.constants(beta, b))
    X, Z = _lin(design, F)
    w = (design.y - h) * design.mask + np.einsum("mnk,k->mn", X, beta) + np.einsum("mnq,mq->mn", Z, b)
    return working(X, Z, w)


def lme_step(design: MixedDesign, wk: Working, theta: Array) -> tuple[Array, LinearFit | None]:
    """θ maximising the (restricted) likelihood of the linearised model, from ``theta``."""
    q = len(design.random)

    def objective(th: Array) -> float:
        check_budget()
        fitted = linear_fit(wk, relative_cov(th, q, design.covariance), design.n_obs, design.estimation)
        return fitted.neg2ll if fitted is not None else 1e300

    if theta.size == 1:  # one random constant: a bracketed scalar search is exact and quick
        lo, hi = LOG_SD_BOUNDS
        centre = float(np.clip(theta[0], lo + 0.5, hi - 0.5))
        scalar = minimize_scalar(lambda v: objective(np.array([v])), bracket=(centre - 0.5, centre + 0.5),
                                 tol=1e-12)
        x = np.array([float(np.clip(scalar.x, lo, hi))])
        if not (lo < float(scalar.x) < hi):
            bounded = minimize_scalar(lambda v: objective(np.array([v])), bounds=(lo, hi), method="bounded",
                                      options={"xatol": 1e-10})
            x = np.array([float(bounded.x)])
        best = x if objective(x) <= objective(theta) else theta
    else:
        bounds = [LOG_SD_BOUNDS] * q + [(None, None)] * (theta.size - q)
        found = minimize(objective, np.clip(theta, *LOG_SD_BOUNDS), method="L-BFGS-B", bounds=bounds,
                         options={"ftol": 1e-14, "gtol": 1e-8, "maxiter": 500})
        best = found.x if found.fun <= objective(theta) else theta
    return best, linear_fit(wk, relative_cov(best, q, design.covariance), design.n_obs, design.estimation)


def lindstrom_bates(design: MixedDesign, beta: Array, theta: Array, *, max_iter: int = 100,
                    tol: float = 1e-9) -> Estimate:
    """Alternate PNLS and LME steps until β (relative) and θ move less than ``tol``."""
    q = len(design.random)
    b = np.zeros((design.n_series, q))
    scale = np.maximum(np.abs(beta), 1e-8)
    fitted: LinearFit | None = None
    moved = math.inf
    for it in range(1, max_iter + 1):
        check_budget()
        D = relative_cov(theta, q, design.covariance)
        beta_new, b, obj, ok = pnls(design, beta, b, np.linalg.inv(D))
        if not math.isfinite(obj):
            return Estimate(beta, b, theta, math.nan, math.inf, it, False,
                            "the curve gave non-finite values during the penalised least-squares step", False)
        theta_new, fitted = lme_step(design, linearised(design, beta_new, b), theta)
        if fitted is None:
            return Estimate(beta_new, b, theta, math.nan, math.inf, it, False,
                            "the linearised mixed model is singular (too few series or points for the design)", False)
        moved = max(float(np.max(np.abs(beta_new - beta) / scale)), float(np.max(np.abs(theta_new - theta))))
        beta, theta = beta_new, theta_new
        if moved < tol and ok:
            return Estimate(beta, b, theta, fitted.sigma2, fitted.neg2ll, it, True,
                            f"Lindstrom–Bates alternation converged in {it} iterations", False)
    sigma2 = fitted.sigma2 if fitted is not None else math.nan
    neg2ll = fitted.neg2ll if fitted is not None else math.inf
    if moved < 1e3 * tol and fitted is not None:  # a limit cycle at the level of rounding in the LME step
        return Estimate(beta, b, theta, sigma2, neg2ll, max_iter, True,
                        f"Lindstrom–Bates alternation settled to a relative change of {moved:.1g} "
                        f"in {max_iter} iterations", False)
    return Estimate(beta, b, theta, sigma2, neg2ll, max_iter, False,
                    f"Lindstrom–Bates alternation did not settle in {max_iter} iterations "
                    f"(last relative change {moved:.2g})", False)


def laplace_objective(design: MixedDesign, beta: Array, theta: Array, b: Array) -> tuple[float, float, Array]:
    """(−2ℓ of the Laplace approximation with σ² profiled, σ̂², conditional modes) at (β, θ)."""
    q = len(design.random)
    D = relative_cov(theta, q, design.covariance)
    Dinv = np.linalg.inv(D)
    beta, b_hat, _, ok = pnls(design, beta, b, Dinv, fixed_beta=True)
    if not ok:
        return math.inf, math.nan, b
    h, F = design.evaluate(design.constants(beta, b_hat))
    _, Z = _lin(design, F)
    r = (design.y - h) * design.mask
    neg2ll, sigma2 = laplace_neg2ll(float(np.sum(r * r)), b_hat, np.einsum("mnq,mnr->mqr", Z, Z), D, design.n_obs)
    return neg2ll, sigma2, b_hat


def polish_laplace(design: MixedDesign, start: Estimate) -> Estimate:
    """Maximise the Laplace approximation over (β, θ) from the alternation's fixpoint (ML only)."""
    k = start.beta.size
    scale = np.where(np.abs(start.beta) > 0, np.abs(start.beta), 1.0)
    warm = {"b": start.b}

    def objective(x: Array) -> float:
        check_budget()
        value, _, b_hat = laplace_objective(design, x[:k] * scale, x[k:], warm["b"])
        return value if math.isfinite(value) else 1e300

    x0 = np.concatenate([start.beta / scale, start.theta])
    f0 = objective(x0)
    found = minimize(objective, x0, method="BFGS", jac="3-point", options={"gtol": 1e-7, "maxiter": 200})
    x = found.x if found.fun < f0 else x0
    beta, theta = x[:k] * scale, x[k:]
    theta[: len(design.random)] = np.clip(theta[: len(design.random)], *LOG_SD_BOUNDS)
    neg2ll, sigma2, b_hat = laplace_objective(design, beta, theta, start.b)
    if not math.isfinite(neg2ll):
        return start
    ok = bool(found.success) or abs(found.fun - f0) <= 1e-9 * max(abs(f0), 1.0) or _flat(found)
    note = (f"; Laplace approximation maximised in {found.nit} quasi-Newton steps" if ok
            else f"; the Laplace refinement stopped early ({found.message})")
    return Estimate(beta, b_hat, theta, sigma2, neg2ll, start.iterations + int(found.nit), start.converged and ok,
                    start.message + note, True)


def _flat(found: object) -> bool:
    """BFGS stops with 'precision loss' when the objective is flat to rounding at its optimum."""
    jac = getattr(found, "jac", None)
    return jac is not None and float(np.max(np.abs(jac))) < 1e-4


def covariance_size(design: MixedDesign) -> int:
    return n_theta(len(design.random), design.covariance)
