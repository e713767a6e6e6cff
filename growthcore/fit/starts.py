"""Starting values from the data, so that no user guess is needed."""

from __future__ import annotations

import math

import numpy as np

from growthcore.models.base import ModelForm

Array = np.ndarray


def capacity_guess(p: Array) -> float:
    """K from the change per step: Δp/p ≈ a + b·p crosses zero at K = −a/b (logistic reasoning).

    Falls back to 1.1 × the largest value when that line does not slope down.
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
