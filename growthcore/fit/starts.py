"""Starting values from the data, so that no user guess is needed."""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np
from scipy import optimize

from growthcore.models.base import ModelForm

Array = np.ndarray


#: The K grid of the first-guess profiles, in multiples of the largest observation.
GUESS_GRID = np.geomspace(1.0, 5.0, 321)


def capacity_guess(p: Array, t: Array | None = None) -> float:
    """A first guess of K from the data, never below the largest value of a series that rises to it.

    A series whose largest values come last (it grows, or has levelled off) has its K at or above
    them: the guess is the minimum of a profile over K ≥ max(p), the regression through the origin
    of Δp on p(1 − p/K) for consecutive steps (``t`` omitted or evenly spaced), or the straight line
    of ln(K/p − 1) against t for uneven times (the logistic curve's linear form). Other series
    (cycles, declines) take the logistic reasoning Δp/p ≈ a + b·p, zero at K = −a/b, with 1.1 × the
    largest value as the fallback.
    """
    p = np.asarray(p, dtype=float)
    top = float(p.max()) if p.size else 0.0
    fallback = 1.1 * top if top > 0 else 1.0
    if p.size < 3 or not p.min() > 0:
        return fallback
    if rises_to_its_maximum(p):
        even = t is None or np.allclose(np.diff(t), float(t[1] - t[0]), rtol=1e-6)
        return _increments_profile_min(p, top) if even else _curve_profile_min(np.asarray(t, dtype=float), p, top)
    return capacity_start(p)


def capacity_start(p: Array) -> float:
    """A cheap starting value of K for the solvers: Δp/p ≈ a + b·p crosses zero at K = −a/b.

    Falls back to 1.1 × the largest value when that line does not slope down. (The solvers try
    several starts; the first guess shown to the user is :func:`capacity_guess`.)
    """
    top = float(p.max()) if p.size else 0.0
    fallback = 1.1 * top if top > 0 else 1.0
    if p.size < 3 or not p[:-1].min() > 0:
        return fallback
    x = p[:-1]
    y = (p[1:] - x) / x
    b, a = _line(x, y)
    if b < 0 and a > 0:
        k = -a / b
        if 0.5 * top < k < 5.0 * top:
            return float(k)
    return fallback


def rises_to_its_maximum(p: Array) -> bool:
    """Whether the largest value lies in the last quarter and well above the first: growth that has
    not turned down (a logistic path from below stays under K)."""
    n = p.size
    last = int(np.argmax(p))
    return last >= n - max(2, n // 4) and float(p[last]) > 1.2 * float(p[0])


def _increments_profile_min(p: Array, top: float) -> float:
    x, dp = p[:-1], np.diff(p)

    def sse(ks: Array) -> Array:
        g = x[:, None] * (1.0 - x[:, None] / ks[None, :])
        gg = np.einsum("ij,ij->j", g, g)
        gd = dp @ g
        with np.errstate(all="ignore"):
            return np.where(gg > 0, float(dp @ dp) - gd * gd / gg, np.inf)

    return _grid_then_refine(sse, top * GUESS_GRID)


def _curve_profile_min(t: Array, p: Array, top: float) -> float:
    tc = t - t.mean()

    def sse(ks: Array) -> Array:
        with np.errstate(all="ignore"):
            y = np.log(ks[None, :] / p[:, None] - 1.0)
        yc = y - y.mean(axis=0)
        slope = (tc @ yc) / float(tc @ tc)
        res = yc - tc[:, None] * slope[None, :]
        out = np.einsum("ij,ij->j", res, res)
        return np.where(np.isfinite(out), out, np.inf)

    return _grid_then_refine(sse, top * GUESS_GRID[1:])  # ln(K/p − 1) needs K above every value


def _grid_then_refine(sse: Callable[[Array], Array], ks: Array) -> float:
    """The grid minimum of a profile, refined between its neighbours (the profile is smooth in K)."""
    values = sse(ks)
    j = int(np.argmin(values))
    if j == ks.size - 1:
        return float(ks[j])  # still falling at 5 × the largest value: K is not determined by these data
    found = optimize.minimize_scalar(lambda k: float(sse(np.array([k]))[0]), bounds=(ks[max(j - 1, 0)], ks[j + 1]),
                                     method="bounded", options={"xatol": 1e-10 * ks[j]})
    return float(found.x) if found.success and found.fun <= values[j] else float(ks[j])


def _line(x: Array, y: Array) -> tuple[float, float]:
    """Slope and intercept of the least-squares line (closed form; polyfit's overhead is not needed)."""
    xm, ym = float(x.sum()) / x.size, float(y.sum()) / y.size
    dx = x - xm
    sxx = float(dx @ dx)
    slope = float(dx @ (y - ym)) / sxx if sxx > 0 else 0.0
    return slope, ym - slope * xm


def curve_starts(form: ModelForm, t: Array, p: Array) -> list[dict[str, float]]:
    """Candidate starts for a growth curve from linearisations of its closed form."""
    pmax = float(np.max(p))
    pos = p > 0
    first = float(p[pos][0]) if np.any(pos) else max(pmax, 1.0) * 1e-2
    out: list[dict[str, float]] = []
    for k_factor in (1.05, 1.5, 3.0):
        k0 = max(pmax, 1e-12) * k_factor
        r0, p0 = _linearised(form.id, t, p, k0, first)
        for r_factor in (1.0, 0.3, 3.0):
            start = {"K": k0, "r": r0 * r_factor, "p0": p0, "nu": 1.0, "t_mid": mid_time(k0, r0, p0)}
            out.append({n: start[n] for n in form.param_names if n in start})
    return out


def mid_time(k0: float, r0: float, p0: float) -> float:
    """The time at which a logistic through p0 at t = 0 with rate r0 reaches k0/2."""
    with np.errstate(all="ignore"):
        mid = math.log(k0 / p0 - 1.0) / r0 if k0 > p0 > 0 and r0 > 0 else 0.0
    return float(mid) if math.isfinite(mid) else 0.0


def _linearised(form_id: str, t: Array, p: Array, k0: float, first: float) -> tuple[float, float]:
    """(r, p0) from a straight-line fit of the transformed states against t."""
    with np.errstate(all="ignore"):
        if form_id == "exponential-curve":
            y = np.log(p)
        elif form_id == "gompertz-curve":
            y = np.log(np.log(k0 / p))
        elif form_id == "monomolecular-curve":
            y = np.log(k0 - p)
        else:
            y = np.log(k0 / p - 1.0)
    ok = np.isfinite(y)
    sign = 1.0 if form_id == "exponential-curve" else -1.0
    if np.sum(ok) >= 2 and np.ptp(t[ok]) > 0:
        slope, intercept = _line(t[ok], y[ok])
        r0 = sign * slope
        with np.errstate(all="ignore"):
            if form_id == "exponential-curve":
                p0 = math.exp(intercept)
            elif form_id == "gompertz-curve":
                p0 = k0 * math.exp(-math.exp(intercept))
            elif form_id == "monomolecular-curve":
                p0 = k0 - math.exp(intercept)
            else:
                p0 = k0 / (1.0 + math.exp(intercept))
        if math.isfinite(r0) and r0 > 0 and math.isfinite(p0) and p0 > 0:
            return float(r0), float(p0)
    span = float(np.ptp(t)) or 1.0
    return 4.0 / span, first
