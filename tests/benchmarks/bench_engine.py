"""Engine speed, measured side by side in one run (a script, not a test).

    python tests/benchmarks/bench_engine.py [--repeats N]

1. One trajectory fit of the discrete `logistic` form on 50 points, against a plain
   scipy.optimize.curve_fit of the same difference equation simulated naively, written two ways:
   a Python loop over floats, and the same loop writing element by element into a numpy array.
   Target: ratio ours / naive ≤ 1. Ours also returns standard errors, metrics and diagnostics.
2. One increments fit of `logistic` with K fixed on 200 points (profile=False): the call made
   while a user drags the capacity estimate. Target: median under 1 ms.

The data are invented (a noisy discrete-logistic path). Timings are medians over interleaved
repeats so that both sides of a ratio see the same machine load.
"""

from __future__ import annotations

import argparse
import statistics
import time
import warnings

import numpy as np
from scipy.optimize import curve_fit

from growthcore.data import Series
from growthcore.fit import fit
from growthcore.fit.simulate import iterate
from growthcore.models import get_form


def invented_logistic(n: int, seed: int = 1) -> Series:
    path = iterate(get_form("logistic"), 2.0, {"r": 0.4, "K": 150.0}, n - 1)
    noise = np.exp(np.random.default_rng(seed).normal(0.0, 0.02, n))
    return Series(np.arange(float(n)), path * noise)


def naive_logistic(n: np.ndarray, r: float, k: float, p0: float) -> np.ndarray:
    """p_{n+1} = p_n + r·p_n·(1 − p_n/K), iterated the plain way."""
    out = []
    p = p0
    for _ in range(len(n)):
        out.append(p)
        p = p + r * p * (1.0 - p / k)
    return np.array(out)


def naive_logistic_array(n: np.ndarray, r: float, k: float, p0: float) -> np.ndarray:
    """The same recursion as it is often first written: element by element into a numpy array."""
    p = np.empty(len(n))
    p[0] = p0
    for i in range(1, len(n)):
        p[i] = p[i - 1] + r * p[i - 1] * (1.0 - p[i - 1] / k)
    return p


def naive_fit(series: Series, model=naive_logistic) -> np.ndarray:
    y = series.p
    guess = [0.5, float(np.max(y)), float(y[0])]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        params, _ = curve_fit(model, series.t, y, p0=guess, maxfev=5000)
    return params


def ours(series: Series, profile: bool) -> dict[str, float]:
    result = fit(series, "logistic", method="trajectory", profile=profile)
    assert result.success, result.message
    return result.values


def timed(fn) -> float:
    start = time.perf_counter()
    fn()
    return time.perf_counter() - start


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=40, help="repeats of the trajectory comparison")
    parser.add_argument("--calls", type=int, default=3000, help="calls of the fixed-K increments fit")
    args = parser.parse_args()

    series50 = invented_logistic(50)
    mine, theirs = ours(series50, False), naive_fit(series50)
    agree = np.allclose([mine["r"], mine["K"], mine["p0"]], theirs, rtol=1e-4)
    ours_t, ours_prof_t, naive_t, naive_array_t = [], [], [], []
    for _ in range(args.repeats):
        ours_t.append(timed(lambda: ours(series50, False)))
        naive_t.append(timed(lambda: naive_fit(series50)))
        naive_array_t.append(timed(lambda: naive_fit(series50, naive_logistic_array)))
        ours_prof_t.append(timed(lambda: ours(series50, True)))
    m_ours, m_naive, m_prof, m_array = (statistics.median(x) for x in (ours_t, naive_t, ours_prof_t, naive_array_t))
    print("1. trajectory fit of `logistic` (difference form), 50 points")
    print(f"   growthcore fit(profile=False)     median {m_ours * 1e3:8.2f} ms  (estimates, SEs, metrics, diagnostics)")
    print(f"   naive curve_fit, Python loop      median {m_naive * 1e3:8.2f} ms  (estimates, covariance)")
    print(f"   ratio ours / naive                {m_ours / m_naive:8.2f}     target <= 1  "
          f"{'met' if m_ours <= m_naive else 'MISSED'}")
    print(f"   naive curve_fit, numpy elements   median {m_array * 1e3:8.2f} ms  (the same loop writing into an array)")
    print(f"   ratio ours / numpy-element naive  {m_ours / m_array:8.2f}     target <= 1  "
          f"{'met' if m_ours <= m_array else 'MISSED'}")
    print(f"   same estimates (rtol 1e-4)        {agree}")
    print(f"   for information: fit with the K profile interval (41 refits): median {m_prof * 1e3:.2f} ms, "
          f"ratio {m_prof / m_naive:.2f}")

    series200 = invented_logistic(200, seed=2)
    fit(series200, "logistic", method="increments", capacity=150.0, profile=False)  # warm caches
    calls = []
    for _ in range(args.calls):
        calls.append(timed(lambda: fit(series200, "logistic", method="increments", capacity=150.0, profile=False)))
    m_inc = statistics.median(calls)
    print("2. increments fit of `logistic` with K fixed, 200 points, profile=False")
    print(f"   median {m_inc * 1e3:.3f} ms over {args.calls} calls (p90 {np.percentile(calls, 90) * 1e3:.3f} ms)"
          f"   target < 1 ms  {'met' if m_inc < 1e-3 else 'MISSED'}")


if __name__ == "__main__":
    main()
