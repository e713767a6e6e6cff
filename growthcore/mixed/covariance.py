"""Coordinates of the random-effects covariance.

The optimiser works on the relative covariance D = Ψ/σ² through its log-Cholesky factor (unconstrained
and always positive definite; Pinheiro & Bates 1996, Statistics and Computing 6:289). Intervals are
drawn in the coordinates users read: log SDs, Fisher-z of the correlations, and log σ.
"""

from __future__ import annotations

import numpy as np

Array = np.ndarray


def n_theta(q: int, covariance: str) -> int:
    return q * (q + 1) // 2 if covariance == "full" else q


def relative_cov(theta: Array, q: int, covariance: str) -> Array:
    """D from θ: the diagonal of its Cholesky factor is exp(θ[:q]), the rest fills the lower triangle."""
    L = np.diag(np.exp(theta[:q]))
    if covariance == "full" and q > 1:
        rows, cols = np.tril_indices(q, -1)
        L[rows, cols] = theta[q:]
    return L @ L.T


def theta_of(D: Array, covariance: str) -> Array:
    """θ of a positive-definite D (inverse of :func:`relative_cov`)."""
    q = D.shape[0]
    if covariance != "full":
        return 0.5 * np.log(np.diag(D))
    L = np.linalg.cholesky(D)
    rows, cols = np.tril_indices(q, -1)
    return np.concatenate([np.log(np.diag(L)), L[rows, cols]])


def natural_of(psi: Array, sigma: float, covariance: str) -> Array:
    """(log SDs, atanh of correlations when full, log σ) of Ψ and σ."""
    sd = np.sqrt(np.diag(psi))
    parts = [np.log(sd)]
    if covariance == "full" and psi.shape[0] > 1:
        rows, cols = np.tril_indices(psi.shape[0], -1)
        parts.append(np.arctanh(np.clip(psi[rows, cols] / (sd[rows] * sd[cols]), -1 + 1e-15, 1 - 1e-15)))
    parts.append(np.array([np.log(sigma)]))
    return np.concatenate(parts)


def from_natural(x: Array, q: int, covariance: str) -> tuple[Array, float]:
    """(Ψ, σ) from :func:`natural_of` coordinates."""
    sd = np.exp(x[:q])
    corr = np.eye(q)
    if covariance == "full" and q > 1:
        rows, cols = np.tril_indices(q, -1)
        corr[rows, cols] = np.tanh(x[q:-1])
        corr[cols, rows] = corr[rows, cols]
    return corr * np.outer(sd, sd), float(np.exp(x[-1]))
