"""Log-likelihoods of the mixed model: the linear mixed model of the LME step and the Laplace form.

Notes
-----
For a linear mixed model w_i = X_i·β + Z_i·b_i + ε_i with b_i ~ N(0, σ²·D), ε_i ~ N(0, σ²·I), the
relative marginal covariance is V_i = I + Z_i·D·Z_i'. With M_i = D⁻¹ + Z_i'Z_i, Woodbury gives
V_i⁻¹ = I − Z_i·M_i⁻¹·Z_i' and log|V_i| = log|D| + log|M_i|, so only q × q systems per series are
solved. Profiling β (GLS) and σ² out,

    ML:    −2ℓ = N·(log(2π·RSS/N) + 1) + Σ log|V_i|
    REML:  −2ℓ = (N − k)·(log(2π·RSS/(N − k)) + 1) + Σ log|V_i| + log|Σ X_i'V_i⁻¹X_i|

(Pinheiro & Bates 2000, §2.2). For the nonlinear model the Laplace approximation of the marginal
likelihood, with the Gauss–Newton Hessian at the conditional modes b̂_i, has the same form with
RSS = Σ ‖y_i − f(φ̂_i)‖² + b̂_i'D⁻¹b̂_i and Z_i = ∂f/∂b at b̂_i (Pinheiro & Bates 2000, §7.1.2); it is
exact when the random effects enter the curve linearly (K of a logistic).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

Array = np.ndarray
LOG_2PI = math.log(2.0 * math.pi)


@dataclass(frozen=True)
class Working:
    """Per-series cross products of a linear mixed model (the LME step's linearisation)."""

    XtX: Array  # (m, k, k)
    XtZ: Array  # (m, k, q)
    ZtZ: Array  # (m, q, q)
    Xtw: Array  # (m, k)
    Ztw: Array  # (m, q)
    wtw: Array  # (m,)


def working(X: Array, Z: Array, w: Array) -> Working:
    """Cross products of design X (m, n, k), Z (m, n, q) and response w (m, n); padding rows are zero."""
    return Working(
        np.einsum("mnk,mnl->mkl", X, X), np.einsum("mnk,mnl->mkl", X, Z), np.einsum("mnk,mnl->mkl", Z, Z),
        np.einsum("mnk,mn->mk", X, w), np.einsum("mnk,mn->mk", Z, w), np.einsum("mn,mn->m", w, w),
    )


@dataclass(frozen=True)
class LinearFit:
    """The GLS solution of a linear mixed model at one relative covariance D."""

    neg2ll: float
    beta: Array
    rss: float
    sigma2: float
    xvx: Array          # Σ X_i'V_i⁻¹X_i (relative)
    logdet_v: float


def linear_fit(wk: Working, D: Array, n_obs: int, estimation: str) -> LinearFit | None:
    """β, σ² and −2ℓ profiled at D; None when D or the GLS system is singular."""
    try:
        Dinv = np.linalg.inv(D)
        sign_d, logdet_d = np.linalg.slogdet(D)
        M = wk.ZtZ + Dinv
        sign_m, logdet_m = np.linalg.slogdet(M)
        if sign_d <= 0 or np.any(sign_m <= 0):
            return None
        Minv = np.linalg.inv(M)
        XZM = np.einsum("mkq,mqr->mkr", wk.XtZ, Minv)
        xvx = wk.XtX.sum(axis=0) - np.einsum("mkr,mlr->kl", XZM, wk.XtZ)
        xvw = wk.Xtw.sum(axis=0) - np.einsum("mkr,mr->k", XZM, wk.Ztw)
        wvw = float(wk.wtw.sum() - np.einsum("mq,mqr,mr->", wk.Ztw, Minv, wk.Ztw))
        beta = np.linalg.solve(xvx, xvw)
    except np.linalg.LinAlgError:
        return None
    rss = wvw - float(beta @ xvw)
    logdet_v = float(logdet_d * wk.ZtZ.shape[0] + logdet_m.sum())
    k = beta.size
    dof = n_obs - k if estimation == "REML" else n_obs
    if not rss > 0 or dof <= 0:
        return None
    neg2ll = dof * (LOG_2PI + math.log(rss / dof) + 1.0) + logdet_v
    if estimation == "REML":
        sign_x, logdet_x = np.linalg.slogdet(xvx)
        if sign_x <= 0:
            return None
        neg2ll += float(logdet_x)
    return LinearFit(float(neg2ll), beta, rss, rss / dof, xvx, logdet_v)


def linear_neg2ll(wk: Working, psi: Array, sigma: float, n_obs: int, estimation: str) -> float:
    """−2ℓ with σ not profiled (β still GLS), for the curvature behind the variance intervals."""
    s2 = sigma * sigma
    fitted = linear_fit(wk, psi / s2, n_obs, estimation)
    if fitted is None:
        return math.inf
    k = fitted.beta.size
    dof = n_obs - k if estimation == "REML" else n_obs
    out = dof * (LOG_2PI + math.log(s2)) + fitted.logdet_v + fitted.rss / s2
    if estimation == "REML":
        out += float(np.linalg.slogdet(fitted.xvx)[1])
    return float(out)


def laplace_neg2ll(residual_ss: float, b: Array, ZtZ: Array, D: Array, n_obs: int) -> tuple[float, float]:
    """(−2ℓ of the Laplace form with σ² profiled, σ̂²); ``b`` (m, q) are the conditional modes."""
    Dinv = np.linalg.inv(D)
    rss = residual_ss + float(np.einsum("mq,qr,mr->", b, Dinv, b))
    sign_d, logdet_d = np.linalg.slogdet(D)
    sign_m, logdet_m = np.linalg.slogdet(ZtZ + Dinv)
    if sign_d <= 0 or np.any(sign_m <= 0) or not rss > 0:
        return math.inf, math.nan
    logdet_v = logdet_d * b.shape[0] + float(logdet_m.sum())
    return float(n_obs * (LOG_2PI + math.log(rss / n_obs) + 1.0) + logdet_v), rss / n_obs
