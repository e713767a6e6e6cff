"""Benchmark: 384 series x 4 forms, trajectory fits on 100 points each.

Prints the batch throughput, the ratio against a plain per-series loop of
scipy.optimize.least_squares measured in the same run, and the peak memory.

The plate is invented: logistic growth with well-to-well variation in K and r and 3 % multiplicative
noise, wells A1..P24. Run with ``python tests/benchmarks/bench_batch.py [--workers N] [--quick]``.
"""

from __future__ import annotations

import argparse
import resource
import sys
import time

import numpy as np
from scipy.optimize import least_squares

from growthcore.batch import fit_batch, from_series, well_name
from growthcore.data import Series
from growthcore.models.catalogue import get_form

FORMS = ("logistic-curve", "gompertz-curve", "logistic", "ricker")


def invented_plate(n_series: int = 384, n_points: int = 100, seed: int = 7) -> list[Series]:
    rng = np.random.default_rng(seed)
    t = np.arange(n_points) * 0.25
    out = []
    for i in range(n_series):
        k = rng.uniform(0.6, 1.6)
        r = rng.uniform(0.3, 0.8)
        p0 = rng.uniform(0.01, 0.04)
        p = k / (1.0 + (k / p0 - 1.0) * np.exp(-r * t))
        p = p * (1.0 + 0.03 * rng.standard_normal(n_points))
        out.append(Series(t, p, name=well_name(i // 24, i % 24), time_unit="h"))
    return out


def plain_fit(form_id: str, t: np.ndarray, p: np.ndarray):  # noqa: ANN201 - the reference loop's own result
    """What a plain script does: one least_squares call per series from a simple start."""
    form = get_form(form_id)
    names = [s.name for s in form.params] + (["p0"] if form.kind == "difference" else [])
    guess = {"K": 1.1 * float(p.max()), "r": 0.5, "p0": max(float(p[0]), 1e-9), "lambda": 1.6}
    x0 = np.array([guess[n] for n in names])
    lower = np.zeros(len(names))
    if form.kind == "curve":
        def res(x: np.ndarray) -> np.ndarray:
            return p - form.value(t, dict(zip(names, x, strict=True)))
    else:
        def res(x: np.ndarray) -> np.ndarray:
            v = dict(zip(names, x, strict=True))
            path = np.empty(p.size)
            q = v["p0"]
            for i in range(p.size):
                path[i] = q
                q = q + form.increment(q, v)
            return p - path
    with np.errstate(all="ignore"):
        return least_squares(res, x0, bounds=(lower, np.inf))


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--series", type=int, default=384)
    ap.add_argument("--quick", action="store_true", help="time the plain loop on a quarter of the series and scale")
    args = ap.parse_args(argv)
    plate = invented_plate(args.series)
    data = from_series(plate)
    n_fits = len(plate) * len(FORMS)

    # memory is read from the kernel's peak resident set size afterwards: tracing every
    # allocation (tracemalloc) would slow the run it measures several-fold
    t0 = time.perf_counter()
    batch = fit_batch(data, FORMS, method="trajectory", workers=args.workers)
    batch_s = time.perf_counter() - t0
    converged = sum(f.result.success for f in batch.fits)
    single = sum(f.path == "single" for f in batch.fits)

    subset = plate[: max(1, len(plate) // 4)] if args.quick else plate
    t0 = time.perf_counter()
    plain_ok = 0
    for form_id in FORMS:
        for s in subset:
            plain_ok += bool(plain_fit(form_id, s.t, s.p).success)
    plain_s = (time.perf_counter() - t0) * (len(plate) / len(subset))

    self_rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    child_rss = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0
    bound = self_rss + args.workers * child_rss
    print(f"batch: {len(plate)} series x {len(FORMS)} forms = {n_fits} trajectory fits on {plate[0].t.size} points")
    print(f"  growthcore batch ({args.workers} workers): {batch_s:.2f} s, {n_fits / batch_s:.0f} fits/s, "
          f"{converged} converged, {single} refitted singly")
    print(f"  plain least_squares loop:  {plain_s:.2f} s, {n_fits / plain_s:.0f} fits/s"
          f"{' (scaled from a quarter)' if args.quick else ''}, {plain_ok * (len(plate) // len(subset))} converged")
    print(f"  speed-up: {plain_s / batch_s:.1f}x (target >= 10x)")
    print(f"  peak memory: parent {self_rss:.0f} MB RSS, largest worker {child_rss:.0f} MB RSS, "
          f"bound parent + {args.workers} x worker = {bound:.0f} MB (target < 1024 MB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
