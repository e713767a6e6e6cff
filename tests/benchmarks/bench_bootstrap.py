"""Time a 1000-resample bootstrap of a three-constant trajectory fit on 50 points, two ways, in one run:

- growthcore.uncertainty.bootstrap (batched Levenberg–Marquardt, warm starts from the estimate);
- a plain loop of scipy.optimize.least_squares calls from cold starts (the data-based defaults
  r = 0.5, K = 1.1·max, p0 = first value), on the same resamples.

Run: python tests/benchmarks/bench_bootstrap.py [resamples]
Targets: the batched run within 2 s and at least 5× faster than the loop.
"""

from __future__ import annotations

import sys
import time

import numpy as np
from scipy.optimize import least_squares

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models.catalogue import get_form
from growthcore.uncertainty import bootstrap
from growthcore.uncertainty.bootstrap import _draws
from growthcore.uncertainty.refit import modified_residuals, refit_problem


def main(resamples: int = 1000) -> int:
    form = get_form("logistic")
    rng = np.random.default_rng(2024)
    y = iterate(form, 5.0, {"r": 0.5, "K": 100.0}, 49) + rng.normal(0.0, 2.0, 50)
    series = Series(np.arange(50.0), y)
    result = fit(series, "logistic", profile=False)
    seed = 11

    bootstrap(result, resamples=20, seed=seed)  # warm the imports and caches
    t0 = time.perf_counter()
    boot = bootstrap(result, resamples=resamples, seed=seed)
    batched = time.perf_counter() - t0

    problem = refit_problem(result)
    pool = modified_residuals(problem.residuals, len(problem.names))
    targets = problem.fitted[:, None] + pool[_draws(seed, 0, resamples, pool.size)]
    steps = 49
    cold = np.array([0.5, 1.1 * float(np.max(y)), float(y[0])])

    t0 = time.perf_counter()
    loop_x = np.empty((resamples, 3))

    def residuals(x: np.ndarray, target: np.ndarray) -> np.ndarray:
        path = iterate(form, x[2], {"r": x[0], "K": x[1]}, steps)
        return np.nan_to_num(target - path, nan=1e6, posinf=1e6, neginf=-1e6)

    for b in range(resamples):
        fitted = least_squares(residuals, cold, bounds=(problem.lower, problem.upper), method="trf",
                               args=(targets[:, b],))
        loop_x[b] = fitted.x
    loop = time.perf_counter() - t0

    ok = boot.ok
    agree = float(np.max(np.abs(boot.samples[ok] - loop_x[ok]) / np.abs(loop_x[ok]))) if ok.any() else float("nan")
    print(f"resamples: {resamples}, points: {y.size}, constants: {len(problem.names)} (logistic trajectory)")
    print(f"{'batched, warm':<28}{batched:8.3f} s   failed refits: {boot.failed}")
    print(f"{'scipy loop, cold starts':<28}{loop:8.3f} s")
    print(f"{'ratio (loop / batched)':<28}{loop / batched:8.1f} x")
    print(f"largest relative difference between the two sets of refits: {agree:.2g}")
    return 0 if batched <= 2.0 and loop / batched >= 5.0 else 1


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000))
