"""Simulated replicate sets with known population values and SDs: are they recovered, and do the 95%
intervals cover them about 95% of the time?

Each simulation draws S series of logistic-mid-curve growth with K_i ~ N(K, SD_K²) (and, with
--random-r, r_i ~ N(r, SD_r²)), adds Gaussian noise and fits the mixed-effects model; the script
prints, per quantity, the mean estimate, its relative bias and the share of intervals that hold the
true value. The data are invented (seeded). Not a timed test: a few minutes on one core.

Run: python tests/simulations/coverage_mixed.py [--sims 400] [--series 24] [--estimation ML|REML] [--random-r]
Reading: coverage from 0.90 to 0.99 counts as near 95% here (the binomial standard error is 1.1
points at 400 simulations); with a couple of dozen series the intervals run a point or three below
nominal, as Wald intervals with estimated variances do, and approach it as the series grow.
"""

from __future__ import annotations

import argparse
import math
import sys
import time

import numpy as np
from scipy.special import expit

from growthcore.data import Series
from growthcore.mixed import fit_population

TRUE = {"K": 100.0, "r": 0.5, "t_mid": 9.0, "sd_K": 15.0, "sd_r": 0.05, "sigma": 3.0}


def simulate(rng: np.random.Generator, n_series: int, random_r: bool) -> list[Series]:
    t = np.linspace(0.0, 20.0, 12)
    out = []
    for i in range(n_series):
        k = TRUE["K"] + TRUE["sd_K"] * rng.standard_normal()
        r = TRUE["r"] + (TRUE["sd_r"] * rng.standard_normal() if random_r else 0.0)
        p = k * expit(r * (t - TRUE["t_mid"])) + TRUE["sigma"] * rng.standard_normal(t.size)
        out.append(Series(t, p, name=f"S{i + 1}"))
    return out


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sims", type=int, default=400)
    ap.add_argument("--series", type=int, default=24)
    ap.add_argument("--estimation", choices=("ML", "REML"), default="REML")
    ap.add_argument("--random-r", action="store_true")
    ap.add_argument("--seed", type=int, default=2000)
    args = ap.parse_args(argv)
    random = ["K", "r"] if args.random_r else ["K"]
    truth = {"K": TRUE["K"], "r": TRUE["r"], "t_mid": TRUE["t_mid"], "SD K": TRUE["sd_K"], "sigma": TRUE["sigma"]}
    if args.random_r:
        truth["SD r"] = TRUE["sd_r"]
    values: dict[str, list[float]] = {k: [] for k in truth}
    covered: dict[str, list[bool]] = {k: [] for k in truth}
    failed = 0
    started = time.perf_counter()
    rng = np.random.default_rng(args.seed)
    for _ in range(args.sims):
        fit = fit_population(simulate(rng, args.series, args.random_r), "logistic-mid-curve", random=random,
                             estimation=args.estimation)
        if not fit.success:
            failed += 1
            continue
        found = {"K": fit.fixed["K"], "r": fit.fixed["r"], "t_mid": fit.fixed["t_mid"], "SD K": fit.random_sd["K"],
                 "sigma": fit.residual_sd}
        if args.random_r:
            found["SD r"] = fit.random_sd["r"]
        for name, est in found.items():
            values[name].append(est.value)
            ci = est.ci95
            covered[name].append(ci is not None and ci[0] <= truth[name] <= ci[1])
    seconds = time.perf_counter() - started
    print(f"{args.sims} simulations of {args.series} series x 12 points, random {', '.join(random)}, "
          f"{args.estimation}: {failed} failed, {seconds:.0f} s")
    print(f"{'quantity':>8} {'true':>9} {'mean est.':>10} {'rel. bias':>9} {'coverage':>9}")
    worst = 1.0
    for name, true in truth.items():
        v = np.array(values[name])
        cover = float(np.mean(covered[name])) if covered[name] else math.nan
        worst = min(worst, cover) if math.isfinite(cover) else worst
        print(f"{name:>8} {true:9.4g} {v.mean():10.4g} {(v.mean() - true) / true:9.2%} {cover:9.1%}")
    ok = failed <= 0.02 * args.sims and all(0.90 <= float(np.mean(c)) <= 0.99 for c in covered.values() if c)
    print("coverage near 95% for every quantity:", "yes" if ok else "NO (see the table)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
