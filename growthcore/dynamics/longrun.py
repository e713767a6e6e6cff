"""Long-run behaviour of a map p_{n+1} = f(p_n), classified for many parameter sets at once.

Notes
-----
The map is iterated from a start for ``transient`` steps, then ``keep`` further states are read:

- extinction: the state falls to (numerically) zero or below;
- unbounded: the state overflows, or keeps rising without slowing down;
- a fixed point when the tail no longer moves (or still moves one way only, slowly): monotone
  approach when f'(p*) ≥ 0,
  damped oscillation when f'(p*) < 0 (the deviation changes sign every step);
- a cycle of period q when p_{n+q} = p_n across the tail, for the smallest such q ≤ ``max_period``;
- chaos when no period is found and the Lyapunov exponent λ = mean ln|f'(p_n)| over the tail is
  positive (λ > ``CHAOS_THRESHOLD``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np

from growthcore.budget import check_budget
from growthcore.fit.simulate import iterate
from growthcore.models.base import DifferenceForm
from growthcore.numbers import finite_or_none

Array = np.ndarray
KINDS: tuple[str, ...] = ("monotone", "damped-oscillation", "cycle", "chaos", "unbounded", "extinction")
#: Lyapunov exponents below this count as zero: finite tails give small positive values at neutral cycles.
CHAOS_THRESHOLD = 1e-3
TRANSIENT = 4000
KEEP = 2048
MAX_PERIOD = 64
#: Relative tolerance (to the state scale) for "the tail no longer moves" and "p_{n+q} = p_n".
TOL = 1e-7


@dataclass(frozen=True)
class LongRun:
    """The long-run behaviour of one parameter set; ``states`` are the cycle's states (one for a fixed point)."""

    kind: str
    period: int | None
    lyapunov: float | None
    states: tuple[float, ...]
    start: float

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "period": self.period, "lyapunov": finite_or_none(self.lyapunov),
                "states": [float(s) for s in self.states], "start": float(self.start)}

    @classmethod
    def from_dict(cls, d: Mapping[str, Any]) -> LongRun:
        period, lyapunov = d.get("period"), d.get("lyapunov")
        return cls(str(d["kind"]), None if period is None else int(period),
                   None if lyapunov is None else float(lyapunov), tuple(float(s) for s in d["states"]),
                   float(d["start"]))


@dataclass(frozen=True)
class LongRunBatch:
    """Long-run behaviour for m parameter sets: ``kind`` holds indices into ``KINDS``; period 0 = none."""

    kind: Array
    period: Array
    lyapunov: Array
    tail: Array  # (keep, m)
    start: float

    def kinds(self) -> list[str]:
        return [KINDS[int(k)] for k in self.kind]

    def item(self, j: int) -> LongRun:
        kind = KINDS[int(self.kind[j])]
        period = int(self.period[j]) or None
        tail = self.tail[:, j]
        if kind in ("monotone", "damped-oscillation"):
            states: tuple[float, ...] = (float(tail[-1]),)
        elif kind == "cycle" and period:
            states = tuple(sorted(float(s) for s in tail[-period:]))
        else:
            states = ()
        lyap = float(self.lyapunov[j])
        return LongRun(kind, period, finite_or_none(lyap), states, self.start)


def classify(
    form: DifferenceForm,
    values: Mapping[str, Array | float],
    start: float | Array,
    *,
    scale: float,
    transient: int = TRANSIENT,
    keep: int = KEEP,
    max_period: int = MAX_PERIOD,
) -> LongRunBatch:
    """Classify the long run of ``form`` from ``start`` for every parameter set that ``values`` holds.

    ``scale`` is a typical state (the largest observation or K): tolerances are relative to it.
    ``start`` may be an array (one start per parameter set, e.g. a fitted p0); it broadcasts like a constant.
    """
    scale = abs(float(scale)) or 1.0
    path = iterate(form, start, values, transient + keep)
    if path.ndim == 1:
        path = path[:, None]
    m = path.shape[1]
    tail = path[-keep:]
    with np.errstate(all="ignore"):
        finite_all = np.all(np.isfinite(path), axis=0)
        # the first non-positive state ends a population: after it the form is outside its meaning
        low = np.where(np.isfinite(path), path <= 1e-12 * scale, False)
        first_low = np.where(low.any(axis=0), low.argmax(axis=0), path.shape[0])
        bad = ~np.isfinite(path)
        first_bad = np.where(bad.any(axis=0), bad.argmax(axis=0), path.shape[0])
        extinct = first_low < first_bad
        huge = ~extinct & (~finite_all | np.any(np.abs(tail) > 1e12 * scale, axis=0))
        d = np.diff(tail[-max(3, keep // 4):], axis=0)
        rising = np.all(d > 0, axis=0) & (d[-1] >= d[0] * (1.0 - 1e-9))
        unbounded = huge | (~extinct & rising & (np.abs(d[-1]) > TOL * scale))
        window = tail[-2 * max_period:]
        period = np.zeros(m, dtype=int)
        unmatched = np.arange(m)
        limit = TOL * max(scale, 1e-300) * 10.0
        for q in range(1, max_period + 1):
            # ascending, each set leaving at its smallest matching q (a fixed point also matches every q);
            # a gap that is not a number (NaN or inf − inf) makes the max NaN, which matches no q
            moved = np.max(np.abs(window[q:] - window[:-q]), axis=0)
            hit = moved <= limit
            if hit.any():
                period[unmatched[hit]] = q
                unmatched, window = unmatched[~hit], window[:, ~hit]
                if not unmatched.size:
                    break
        deriv = np.abs(form.next_state_dp(tail, values))
        lyap = np.mean(np.log(np.where(deriv > 0, deriv, 1e-300)), axis=0)
        slope = form.next_state_dp(tail[-1:], values)[0]
    suspect = _near_neutral(form, values, tail, period, lyap, m)
    if np.any(suspect):
        refined, refined_states = _settle_by_multiplier(form, values, tail, period, suspect, scale, max_period)
        ok = refined > 0
        for j in np.flatnonzero(ok):
            q = int(refined[j])
            period[j] = q
            tail[-q:, j] = refined_states[int(j)][:q]  # the exact cycle, so that the states shown are the cycle's
            d[-1, j] = 0.0
        if np.any(ok):
            with np.errstate(all="ignore"):
                slope = np.where(ok, form.next_state_dp(tail[-1:], values)[0], slope)
    kind = np.full(m, KINDS.index("chaos"))
    fixed_point = period == 1
    kind = np.where(fixed_point & (slope >= 0), KINDS.index("monotone"), kind)
    kind = np.where(fixed_point & (slope < 0), KINDS.index("damped-oscillation"), kind)
    kind = np.where(period > 1, KINDS.index("cycle"), kind)
    not_chaotic = (period == 0) & ~(lyap > CHAOS_THRESHOLD)
    kind = np.where(not_chaotic, KINDS.index("cycle"), kind)  # a long or not yet settled cycle
    # a tail that still moves one way (a multiplier near 1) is a slow monotone approach, not a cycle
    one_way = (period == 0) & (np.all(d > 0, axis=0) | np.all(d < 0, axis=0)) & (np.abs(d[-1]) > 0)
    kind = np.where(one_way, KINDS.index("monotone"), kind)
    kind = np.where(unbounded, KINDS.index("unbounded"), kind)
    kind = np.where(extinct, KINDS.index("extinction"), kind)
    period = np.where(kind == KINDS.index("cycle"), period, 0)
    lyap = np.where(extinct | unbounded, np.nan, lyap)
    return LongRunBatch(kind.astype(int), period, lyap, tail, float(np.median(start)))


#: Cycles whose multiplier lies this close to ±1 settle too slowly for the tail alone to tell their period.
NEAR_NEUTRAL = 0.1


def _column(values: Mapping[str, Array | float], cols: Array) -> dict[str, Array | float]:
    return {n: (v if np.ndim(v) == 0 else np.broadcast_to(np.asarray(v, dtype=float), (np.size(v),))[cols])
            for n, v in values.items()}


def _near_neutral(form: DifferenceForm, values: Mapping[str, Array | float], tail: Array, period: Array,
                  lyap: Array, m: int) -> Array:
    """Parameter sets whose detected period is in doubt: a cycle multiplier near ±1, or no period and no chaos."""
    out = np.zeros(m, dtype=bool)
    with np.errstate(all="ignore"):
        deriv = form.next_state_dp(tail, values)
        for q in np.unique(period):
            cols = period == q
            if q == 0:
                out |= cols & ~(lyap > CHAOS_THRESHOLD) & np.all(np.isfinite(tail), axis=0)
                continue
            mu = np.prod(deriv[-int(q):], axis=0)
            out |= cols & np.isfinite(mu) & (np.abs(np.abs(mu) - 1.0) < NEAR_NEUTRAL)
    return out


def _settle_by_multiplier(form: DifferenceForm, values: Mapping[str, Array | float], tail: Array, period: Array,
                          suspect: Array, scale: float, max_period: int) -> tuple[Array, dict[int, Array]]:
    """For each doubtful set, the smallest period whose cycle near the tail is stable by its multiplier.

    Near a period doubling the tail converges like |μ|ⁿ with |μ| → 1, so no finite transient settles it
    at the threshold; Newton's method on f^q(p) = p from the last state finds the cycle near the orbit,
    and the product of f' over it (the cycle's multiplier μ) says whether the orbit can stay there
    (|μ| < 1). 0 where no candidate cycle is stable (the tail's own answer stands).
    """
    m = tail.shape[1]
    found = np.zeros(m, dtype=int)
    states: dict[int, Array] = {}
    cols_all = np.flatnonzero(suspect)
    candidates: set[int] = set()
    for j in cols_all:
        q = int(period[j])
        if q:
            candidates |= {d for d in range(1, q + 1) if q % d == 0} | ({2 * q} if 2 * q <= max_period else set())
        else:
            candidates |= {2 ** k for k in range(int(np.log2(max_period)) + 1)}
    for q in sorted(candidates):
        cols = np.array([j for j in cols_all if found[j] == 0], dtype=int)
        if not cols.size:
            break
        vals = _column(values, cols)
        x = tail[-1, cols].copy()
        for _ in range(60):
            check_budget()
            orbit, mu = _orbit(form, vals, x, q)
            g = orbit[q] - x
            with np.errstate(all="ignore"):
                step = np.where(np.isfinite(mu) & (mu != 1.0), g / (mu - 1.0), 0.0)
            x = x - step
            if np.all(np.abs(step) <= 1e-14 * scale):
                break
        orbit, mu = _orbit(form, vals, x, q)
        converged = (np.isfinite(mu) & (np.abs(orbit[q] - x) <= 1e-10 * scale)
                     & (np.abs(x - tail[-1, cols]) <= 0.1 * scale))
        for i, j in enumerate(cols):
            if not converged[i]:
                continue
            cycle = orbit[:q, i]
            minimal = next(dd for dd in range(1, q + 1)
                           if q % dd == 0 and abs(cycle[dd % q] - cycle[0]) <= 1e-9 * scale) if q > 1 else 1
            with np.errstate(all="ignore"):
                mu_min = float(np.prod(form.next_state_dp(cycle[:minimal], _column(vals, np.array([i])))))
            if math.isfinite(mu_min) and abs(mu_min) < 1.0 and minimal == q and np.all(cycle > 1e-12 * scale):
                found[j] = q
                states[int(j)] = cycle
    return found, states


def _orbit(form: DifferenceForm, values: Mapping[str, Array | float], x: Array, q: int) -> tuple[Array, Array]:
    """x, f(x), ..., f^q(x) and the multiplier (f^q)'(x) = Π f'(f^i(x)) for i < q."""
    out = np.empty((q + 1, x.size))
    out[0] = x
    mu = np.ones(x.size)
    with np.errstate(all="ignore"):
        for i in range(q):
            mu = mu * form.next_state_dp(out[i], values)
            out[i + 1] = form.next_state(out[i], values)
    return out, mu


def long_run(form: DifferenceForm, values: Mapping[str, float], start: float, *, scale: float,
             **options: int) -> LongRun:
    """The long-run behaviour for one parameter set (see :func:`classify`)."""
    return classify(form, values, start, scale=scale, **options).item(0)
