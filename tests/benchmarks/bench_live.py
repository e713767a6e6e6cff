"""Server-side work after a change of the capacity estimate K, against a full refit.

    python tests/benchmarks/bench_live.py [--repeats 40]

A 200-point invented series (discrete logistic with 3 % multiplicative noise) and four forms
(logistic, Gompertz, Ricker, Beverton–Holt). "Live" is what the server does when K moves: the K
callback, panels 1–2, the increments fits with K held, panels 3–5 and the comparison table, each
called as the plain function behind its callback. "Full refit" is the same chain with the trajectory
method and K fitted by every form (with its profile interval), which the app runs on request only.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

import numpy as np

sys.path.insert(0, os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))))

from growthcore.app import ids  # noqa: E402
from growthcore.app.callbacks.capacity import update_capacity  # noqa: E402
from growthcore.app.callbacks.comparison import draw_comparison  # noqa: E402
from growthcore.app.callbacks.explore import explore_panels  # noqa: E402
from growthcore.app.callbacks.fits import compute_fits  # noqa: E402
from growthcore.app.callbacks.panels import draw_panels  # noqa: E402
from growthcore.app.callbacks.settings import build_settings  # noqa: E402

FORMS = ["logistic", "gompertz", "ricker", "beverton-holt"]
LIVE_TARGET_MS = 50.0


def invented_data(n: int = 200) -> dict:
    rng = np.random.default_rng(2024)
    p, out = 0.2, []
    for _ in range(n):
        out.append(p)
        p += 0.06 * p * (1 - p / 5.0)
    obs = np.array(out) * np.exp(rng.normal(0, 0.03, n))
    return {"key": "bench", "source": "invented", "name": "invented", "t": (np.arange(n) * 0.5).tolist(),
            "p": obs.tolist(), "rows": list(range(2, n + 2)), "time_unit": "h", "value_unit": "g/L",
            "time_column": "t", "value_column": "p", "quantity": "Biomass"}


def chain(data: dict, settings: dict, k: float, previous_k: float) -> None:
    committed = update_capacity(ids.K_INPUT, k, None, None, data, settings, None, previous_k)[0]
    explore_panels(data, None, settings, committed)
    store = compute_fits(data, None, settings, committed)
    draw_panels(store, committed, data, None)
    draw_comparison(store, None)


def timed(data: dict, settings: dict, ks: list[float]) -> list[float]:
    out = []
    for previous, k in zip([ks[-1], *ks[:-1]], ks, strict=True):
        start = time.perf_counter()
        chain(data, settings, k, previous)
        out.append((time.perf_counter() - start) * 1000.0)
    return out


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=40)
    args = parser.parse_args()
    data = invented_data()
    live = build_settings(FORMS, [], "", "increments", "additive", "held")[0]
    full = build_settings(FORMS, [], "", "trajectory", "additive", "fitted")[0]
    ks = [float(k) for k in np.linspace(4.0, 6.0, args.repeats)]
    timed(data, live, ks[:3])  # warm caches and imports
    live_ms = timed(data, live, ks)
    full_ms = timed(data, full, ks[: max(3, args.repeats // 8)])
    med_live, med_full = statistics.median(live_ms), statistics.median(full_ms)
    print(f"series: {len(data['t'])} points, forms: {', '.join(FORMS)}")
    print(f"{'after a K change (live: increments, K held)':<52} median {med_live:8.1f} ms   "
          f"(p90 {sorted(live_ms)[int(0.9 * len(live_ms))]:.1f} ms, {len(live_ms)} runs)")
    print(f"{'full refit (trajectory, K fitted with profile)':<52} median {med_full:8.1f} ms   "
          f"({len(full_ms)} runs)")
    print(f"ratio full / live: {med_full / med_live:.0f}x; live target {LIVE_TARGET_MS:.0f} ms: "
          f"{'met' if med_live <= LIVE_TARGET_MS else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
