"""Time a mixed-effects fit of 96 series x 20 points (logistic-mid-curve, random K) two ways, in one run:

- growthcore.mixed.fit_population (starts from separate fits, Lindstrom–Bates alternation, Laplace
  refinement; exact here, as K enters the curve linearly);
- a plain scipy approach: the marginal log-likelihood integrated over each series' random K by
  adaptive Gauss–Hermite quadrature (Liu & Pierce 1994, Biometrika 81:624; 10 nodes centred on the
  series' conditional mode found by scipy.optimize.minimize_scalar, scaled by the curvature there),
  series by series, maximised directly with scipy.optimize.minimize (BFGS, finite-difference
  gradients) from the pooled least-squares fit. Plain (non-adaptive) quadrature is not an option:
  each series pins its K far more tightly than the spread between series, so fixed nodes miss the
  peak of the integrand and the optimum is wrong.

Both reach the same optimum (the printed log-likelihoods agree), so the times compare like with like.
The data are invented (seeded): K_i ~ N(100, 15²), r = 0.5, t_mid = 9, residual SD 2.

Run: python tests/benchmarks/bench_mixed.py
Targets: growthcore within 2 s and at least 5x faster than the plain approach.
"""

from __future__ import annotations

import math
import sys
import time

import numpy as np
from scipy.optimize import curve_fit, minimize, minimize_scalar
from scipy.special import expit, logsumexp

from growthcore.data import Series
from growthcore.mixed import fit_population

N_SERIES, N_POINTS, NODES = 96, 20, 10
TRUE = {"K": 100.0, "r": 0.5, "t_mid": 9.0, "sd_K": 15.0, "sigma": 2.0}


def invented_replicates(seed: int = 17) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    t = np.arange(N_POINTS, dtype=float)
    k = TRUE["K"] + TRUE["sd_K"] * rng.standard_normal(N_SERIES)
    y = k[:, None] * expit(TRUE["r"] * (t - TRUE["t_mid"]))[None, :]
    return t, y + TRUE["sigma"] * rng.standard_normal(y.shape)


def plain_scipy(t: np.ndarray, y: np.ndarray) -> tuple[float, np.ndarray]:
    """Direct maximisation of the adaptive Gauss–Hermite marginal likelihood; returns (loglik, estimates)."""
    nodes, weights = np.polynomial.hermite.hermgauss(NODES)
    log_w = np.log(weights) + nodes**2
    n = t.size

    def neg_loglik(x: np.ndarray) -> float:
        k, r, t_mid, log_sd, log_sigma = x
        sd, sigma = math.exp(log_sd), math.exp(log_sigma)
        shape = expit(r * (t - t_mid))
        const = -n * (math.log(sigma) + 0.5 * math.log(2 * math.pi)) - math.log(sd) - 0.5 * math.log(2 * math.pi)
        total = 0.0

        def log_joint(b: np.ndarray, yi: np.ndarray) -> np.ndarray:  # log p(y_i | b) + log p(b) without constants
            resid = yi[None, :] - (k + np.atleast_1d(b))[:, None] * shape[None, :]
            return -0.5 * np.sum(resid * resid, axis=1) / sigma**2 - 0.5 * np.atleast_1d(b) ** 2 / sd**2

        def neg_log_joint(b: float, yi: np.ndarray) -> float:
            return -float(log_joint(np.array([b]), yi)[0])

        for yi in y:  # one integral per series
            mode = minimize_scalar(neg_log_joint, bracket=(-sd, sd), args=(yi,)).x
            step = 1e-3 * sd
            around = log_joint(np.array([mode - step, mode, mode + step]), yi)
            curvature = -(around[0] - 2 * around[1] + around[2]) / step**2
            scale = math.sqrt(2.0 / curvature)
            total += const + math.log(scale) + float(logsumexp(log_w + log_joint(mode + scale * nodes, yi)))
        return -total

    (k0, r0, m0), _ = curve_fit(lambda tt, k, r, m: k * expit(r * (tt - m)), np.tile(t, len(y)), y.ravel(),
                                p0=[float(y.max()), 4.0 / float(np.ptp(t)), float(np.median(t))])
    pooled = y - k0 * expit(r0 * (t - m0))
    x0 = np.array([k0, r0, m0, math.log(0.1 * k0), math.log(float(np.std(pooled)))])
    found = minimize(neg_loglik, x0, method="BFGS", options={"gtol": 1e-6})
    return -float(found.fun), found.x


def main() -> int:
    t, y = invented_replicates()
    series = [Series(t, row, name=f"S{i + 1:02d}") for i, row in enumerate(y)]
    fit_population(series[:8], "logistic-mid-curve", random=["K"])  # warm imports and caches

    t0 = time.perf_counter()
    ours = fit_population(series, "logistic-mid-curve", random=["K"])
    ours_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    plain_ll, plain_x = plain_scipy(t, y)
    plain_s = time.perf_counter() - t0

    print(f"{N_SERIES} series x {N_POINTS} points, logistic-mid-curve, random K ({ours.status}: {ours.message})")
    print(f"  growthcore.mixed : {ours_s:7.3f} s  loglik {ours.loglik:.6f}  K {ours.fixed['K'].value:.4f}  "
          f"SD(K) {ours.random_sd['K'].value:.4f}  sigma {ours.residual_sd.value:.4f}")
    print(f"  plain scipy (GH) : {plain_s:7.3f} s  loglik {plain_ll:.6f}  K {plain_x[0]:.4f}  "
          f"SD(K) {math.exp(plain_x[3]):.4f}  sigma {math.exp(plain_x[4]):.4f}")
    ratio = plain_s / ours_s
    print(f"  ratio (plain / growthcore): {ratio:.1f}x")
    agree = abs(ours.loglik - plain_ll) <= 1e-4 * abs(plain_ll)
    ok = ours.success and ours_s <= 2.0 and ratio >= 5.0 and agree
    print("targets: growthcore <= 2 s, >= 5x, same optimum:", "met" if ok else "NOT met")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
