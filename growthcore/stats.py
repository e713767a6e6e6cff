"""Metrics, information criteria, standard errors, intervals and residual diagnostics.

Notes
-----
Likelihood: independent Gaussian errors on the fitted scale with the variance estimated by SSE/n,
log L = −n/2·(ln(2π·SSE/n) + 1). The parameter count in AIC, AICc and BIC is the number of free
parameters plus one for the error variance:
AIC = −2 log L + 2q, AICc = AIC + 2q(q + 1)/(n − q − 1), BIC = −2 log L + q·ln n.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
from scipy import special

from growthcore.numbers import finite_or_none

Array = np.ndarray


def t_quantile(prob: float, dof: int) -> float:
    """Student t quantile (scipy.special directly: scipy.stats is slow to call in a hot path)."""
    return float(special.stdtrit(dof, prob))


@dataclass(frozen=True)
class OriginRegression:
    """Least squares with no intercept: y ≈ X·b."""

    coef: Array
    se: Array
    covariance: Array
    residuals: Array
    sse: float
    dof: int
    residual_sd: float
    r2_uncentered: float
    rank: int


def regression_through_origin(x: Array, y: Array) -> OriginRegression:
    """Regress ``y`` on the columns of ``x`` without an intercept.

    The uncentered R² is 1 − SSE/Σy², the usual figure for a regression through the origin.
    """
    x = np.asarray(x, dtype=float)
    if x.ndim == 1:
        x = x[:, None]
    y = np.asarray(y, dtype=float)
    n, k = x.shape
    if not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        nan = np.full(k, math.nan)
        return OriginRegression(nan, nan, np.full((k, k), math.nan), np.full(n, math.nan), math.nan, n - k,
                                math.nan, math.nan, 0)
    coef, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    residuals = y - x @ coef
    sse = float(residuals @ residuals)
    dof = n - k
    sigma2 = sse / dof if dof > 0 else math.nan
    if rank == k and dof > 0:
        cov = sigma2 * np.linalg.inv(x.T @ x)
    else:
        cov = np.full((k, k), math.nan)
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None)) if dof > 0 else np.full(k, math.nan)
    yy = float(y @ y)
    r2u = 1.0 - sse / yy if yy > 0 else math.nan
    sigma = math.sqrt(sigma2) if dof > 0 else math.nan
    return OriginRegression(coef, se, cov, residuals, sse, dof, sigma, r2u, int(rank))


@dataclass(frozen=True)
class Metrics:
    """Goodness of fit for one fit; SSE, RMSE and the criteria are on the fitted scale."""

    n: int
    n_params: int
    sse: float
    rmse: float
    residual_sd: float
    r2: float
    r2_adjusted: float
    log_likelihood: float
    aic: float
    aicc: float
    bic: float
    r2_uncentered: float | None = None

    def to_dict(self) -> dict[str, float | int | None]:
        return {k: _json_number(v) for k, v in self.__dict__.items()}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Metrics:
        """The metrics a :meth:`to_dict` wrote (None becomes NaN)."""
        r2u = d.get("r2_uncentered")
        return cls(
            n=int(d["n"]), n_params=int(d["n_params"]), sse=_nan(d.get("sse")), rmse=_nan(d.get("rmse")),
            residual_sd=_nan(d.get("residual_sd")), r2=_nan(d.get("r2")), r2_adjusted=_nan(d.get("r2_adjusted")),
            log_likelihood=_nan(d.get("log_likelihood")), aic=_nan(d.get("aic")), aicc=_nan(d.get("aicc")),
            bic=_nan(d.get("bic")), r2_uncentered=None if r2u is None else float(r2u))


def _nan(x: Any) -> float:
    """A stored number back as a float: None (a non-finite value when written) becomes NaN."""
    return math.nan if x is None else float(x)


def _json_number(v: float | int | None) -> float | int | None:
    """Counts as they are; other numbers finite or None."""
    return v if isinstance(v, int) else finite_or_none(v)




def fit_metrics(
    residuals: Array,
    observed: Array,
    predicted: Array,
    n_params: int,
    *,
    r2_uncentered: float | None = None,
) -> Metrics:
    """Metrics from fitted-scale residuals and the observed and predicted states.

    R² is centered and computed on the states themselves whatever the error scale.
    """
    n = int(residuals.size)
    sse = float(residuals @ residuals)
    rmse = math.sqrt(sse / n) if n else math.nan
    dof = n - n_params
    residual_sd = math.sqrt(sse / dof) if dof > 0 else math.nan
    dev = observed - observed.mean() if n else observed
    sst = float(dev @ dev)
    state_res = observed - predicted
    sse_state = float(state_res @ state_res)
    r2 = 1.0 - sse_state / sst if sst > 0 else math.nan
    r2_adj = 1.0 - (1.0 - r2) * (n - 1) / dof if dof > 0 and math.isfinite(r2) else math.nan
    q = n_params + 1
    if n > 0 and sse > 0:
        loglik = -0.5 * n * (math.log(2.0 * math.pi * sse / n) + 1.0)
    else:
        loglik = math.inf if n > 0 else math.nan
    aic = -2.0 * loglik + 2.0 * q
    aicc = aic + 2.0 * q * (q + 1) / (n - q - 1) if n - q - 1 > 0 else math.nan
    bic = -2.0 * loglik + q * math.log(n) if n > 0 else math.nan
    return Metrics(n, n_params, sse, rmse, residual_sd, r2, r2_adj, loglik, aic, aicc, bic, r2_uncentered)


def covariance_and_condition(jac: Array, sse: float, dof: int) -> tuple[Array, float]:
    """s²·(JᵀJ)⁻¹ with s² = SSE/dof and the condition number of J, from one SVD.

    The SVD makes a singular J give NaN instead of garbage.
    """
    k = jac.shape[1]
    if dof <= 0 or jac.size == 0 or not np.isfinite(jac).all():
        return np.full((k, k), math.nan), math.nan
    _, s, vt = np.linalg.svd(jac, full_matrices=False)
    if s.size < k:
        return np.full((k, k), math.nan), math.inf
    largest, smallest = float(s[0]), float(s[-1])
    condition = largest / smallest if smallest > 0 else math.inf
    if smallest <= np.finfo(float).eps * max(jac.shape) * largest:
        return np.full((k, k), math.nan), condition
    scaled = vt / s[:, None]
    return (scaled.T @ scaled) * (sse / dof), condition


def correlation(cov: Array) -> Array:
    sd = np.sqrt(np.diag(cov))
    with np.errstate(invalid="ignore", divide="ignore"):
        return cov / np.outer(sd, sd)


@dataclass(frozen=True)
class Diagnostics:
    """Tests for systematic misfit in residuals taken in time order."""

    durbin_watson: float
    runs: int
    runs_expected: float
    runs_z: float
    runs_p: float
    systematic: bool
    message: str
    lack_of_fit: LackOfFit | None = None

    def to_dict(self) -> dict[str, object]:
        out = {k: (_json_number(v) if isinstance(v, float) else v) for k, v in self.__dict__.items()
               if k != "lack_of_fit"}
        if self.lack_of_fit is not None:
            out["lack_of_fit"] = self.lack_of_fit.to_dict()
        return out

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> Diagnostics:
        lof = d.get("lack_of_fit")
        return cls(durbin_watson=_nan(d["durbin_watson"]), runs=int(d["runs"]),
                   runs_expected=_nan(d.get("runs_expected")), runs_z=_nan(d.get("runs_z")),
                   runs_p=_nan(d.get("runs_p")), systematic=bool(d["systematic"]), message=str(d["message"]),
                   lack_of_fit=None if lof is None else LackOfFit.from_dict(lof))


@dataclass(frozen=True)
class LackOfFit:
    """The lack-of-fit F test: misfit of the mean function against the pure error of replicates."""

    ss_pure_error: float
    df_pure_error: int
    ss_lack_of_fit: float
    df_lack_of_fit: int
    f: float
    p: float
    message: str

    def to_dict(self) -> dict[str, object]:
        return {k: (_json_number(v) if isinstance(v, float) else v) for k, v in self.__dict__.items()}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> LackOfFit:
        return cls(ss_pure_error=_nan(d["ss_pure_error"]), df_pure_error=int(d["df_pure_error"]),
                   ss_lack_of_fit=_nan(d["ss_lack_of_fit"]), df_lack_of_fit=int(d["df_lack_of_fit"]),
                   f=_nan(d["f"]), p=_nan(d["p"]), message=str(d["message"]))


def lack_of_fit(t: Array, observed: Array, predicted: Array, n_params: int) -> LackOfFit | None:
    """Lack-of-fit F test from replicates (points sharing a time), on the scale given.

    Notes
    -----
    Draper & Smith, Applied Regression Analysis, ch. 2: with m distinct times, n points and k
    constants, SS_pe = Σ_i Σ_j (y_ij − ȳ_i)² on n − m degrees of freedom and SS_lof = SSE − SS_pe
    on m − k; F = (SS_lof/(m − k)) / (SS_pe/(n − m)). None without replicates or without m > k.
    """
    t = np.asarray(t, dtype=float)
    y = np.asarray(observed, dtype=float)
    e = y - np.asarray(predicted, dtype=float)
    _, groups = np.unique(t, return_inverse=True)
    m, n = int(groups.max()) + 1 if groups.size else 0, int(y.size)
    df_pe, df_lof = n - m, m - n_params
    if df_pe <= 0 or df_lof <= 0:
        return None
    counts = np.bincount(groups, minlength=m)
    means = np.bincount(groups, weights=y, minlength=m) / counts
    ss_pe = float(np.sum((y - means[groups]) ** 2))
    ss_lof = max(float(e @ e) - ss_pe, 0.0)
    if not (math.isfinite(ss_pe) and math.isfinite(ss_lof)):
        return None
    if ss_pe > 0:
        f = (ss_lof / df_lof) / (ss_pe / df_pe)
        p = float(special.fdtrc(df_lof, df_pe, f))
    else:
        f, p = math.inf, 0.0
    if p < 0.05:
        message = f"lack of fit: the curve misses the replicate means beyond their scatter (F = {f:.3g}, p = {p:.3g})"
    else:
        message = f"no lack of fit beyond the replicates' scatter (F = {f:.3g}, p = {p:.3g})"
    return LackOfFit(ss_pe, df_pe, ss_lof, df_lof, f, p, message)


#: Common practice (no single source): Durbin–Watson below 1 signals positive serial correlation,
#: above 3 negative serial correlation.
DW_LOW, DW_HIGH = 1.0, 3.0


def residual_diagnostics(residuals: Array) -> Diagnostics:
    """Durbin–Watson statistic and the Wald–Wolfowitz runs test on residual signs.

    Notes
    -----
    DW = Σ(e_i − e_{i−1})² / Σe_i². Runs: with n₊ positive and n₋ negative residuals (zeros
    dropped), E[R] = 2n₊n₋/n + 1 and Var[R] = 2n₊n₋(2n₊n₋ − n)/(n²(n − 1)); two-sided normal p.
    """
    e = np.asarray(residuals, dtype=float)
    ss = float(e @ e)
    if ss > 0 and e.size > 1:
        change = e[1:] - e[:-1]
        dw = float(change @ change) / ss
    else:
        dw = math.nan
    signs = np.sign(e[e != 0])
    n = int(signs.size)
    n_pos = int(np.count_nonzero(signs > 0))
    n_neg = n - n_pos
    runs = 1 + int(np.count_nonzero(signs[1:] != signs[:-1])) if n else 0
    if n_pos and n_neg and n > 1:
        expected = 2.0 * n_pos * n_neg / n + 1.0
        var = 2.0 * n_pos * n_neg * (2.0 * n_pos * n_neg - n) / (n * n * (n - 1))
        z = (runs - expected) / math.sqrt(var) if var > 0 else 0.0
        p = math.erfc(abs(z) / math.sqrt(2.0))
    else:
        expected, z, p = math.nan, math.nan, math.nan
    # Misfit of the mean function shows as long same-sign stretches: too few runs, DW well below 2.
    # Alternating signs (too many runs, DW well above 2) are negative serial correlation of the
    # errors, e.g. measurement noise entering both p_n and Δp_n: worth saying, but not a misfit.
    reasons = []
    if math.isfinite(p) and p < 0.05 and z < 0:
        reasons.append(f"too few sign runs (runs test p = {p:.3g})")
    if math.isfinite(dw) and dw < DW_LOW:
        reasons.append(f"Durbin–Watson {dw:.2f} is far below 2")
    systematic = bool(reasons)
    alternating = (math.isfinite(p) and p < 0.05 and z > 0) or (math.isfinite(dw) and dw > DW_HIGH)
    if systematic:
        message = "residuals look systematic: " + "; ".join(reasons)
    elif alternating:
        message = (f"residuals alternate in sign more than chance (Durbin–Watson {dw:.2f}): negatively correlated "
                   "errors, not a misfit of the curve")
    else:
        message = "no sign of systematic misfit"
    return Diagnostics(dw, runs, expected, z, p, systematic, message)


def akaike_weights(aicc: list[float]) -> list[float]:
    """exp(−Δ/2) normalised over the finite values; NaN for the others."""
    vals = np.array([a if a is not None and math.isfinite(a) else math.nan for a in aicc], dtype=float)
    if not np.any(np.isfinite(vals)):
        return [math.nan] * len(aicc)
    delta = vals - np.nanmin(vals)
    w = np.exp(-0.5 * delta)
    w = np.where(np.isfinite(w), w, 0.0)
    total = float(np.sum(w))
    return [float(x / total) if math.isfinite(v) else math.nan for x, v in zip(w, vals, strict=True)]
