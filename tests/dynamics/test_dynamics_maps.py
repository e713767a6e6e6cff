"""Long-run behaviour of the fitted maps checked against published facts of one-dimensional maps.

Our ``logistic`` form p_{n+1} = p + r·p·(1 − p/K) becomes the logistic map x_{n+1} = a·x_n·(1 − x_n)
with a = 1 + r under x = r·p / ((1 + r)·K) (a line of algebra). Thresholds in a: May (1976), Nature
261:459 (stable fixed point for 1 < a < 3, 2-cycle to 1 + √6, the 3-cycle window from 1 + √8);
Feigenbaum (1978), J. Stat. Phys. 19:25 (period doublings at a ≈ 3.544090, 3.564407, 3.568759 and the
accumulation point a∞ ≈ 3.569946; the 4.. and 8.. values are quoted from memory of those tables).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.derived import equilibria
from growthcore.dynamics import classify, long_run
from growthcore.models.catalogue import get_form

LOGISTIC = get_form("logistic")
RICKER = get_form("ricker")
BH = get_form("beverton-holt")
K = 100.0


def logistic_run(r: float, **kw: int):
    return long_run(LOGISTIC, {"r": r, "K": K}, 0.1 * K, scale=K, **kw)


def test_scaling_turns_our_logistic_into_the_logistic_map() -> None:
    # identity: x_{n+1} = a·x_n(1 − x_n) with a = 1 + r, x = r·p/((1 + r)·K)
    r, p = 2.7, np.linspace(1.0, 120.0, 50)
    a = 1.0 + r
    x = r * p / (a * K)
    x_next = r * LOGISTIC.next_state(p, {"r": r, "K": K}) / (a * K)
    np.testing.assert_allclose(x_next, a * x * (1 - x), rtol=1e-12)


@pytest.mark.parametrize("r", [0.3, 0.9, 1.2, 1.8, 1.95])
def test_stable_fixed_point_for_r_below_2(r: float) -> None:
    # May 1976: 1 < a < 3 gives a stable fixed point; f'(K) = 1 − r (our form's derivative)
    lr = logistic_run(r)
    assert lr.kind == ("monotone" if r < 1 else "damped-oscillation")
    assert lr.states[0] == pytest.approx(K, rel=1e-6)
    eq = {round(e["value"], 6): e for e in equilibria(LOGISTIC, {"r": r, "K": K}, 3 * K)}
    assert eq[K]["multiplier"] == pytest.approx(1 - r, abs=1e-9)
    assert eq[K]["stable"] and not eq[0.0]["stable"]


@pytest.mark.parametrize("r, period", [
    (2.2, 2), (2.44, 2),            # 2 < r < √6 ≈ 2.449490 (May 1976)
    (2.46, 4), (2.54, 4),           # √6 < r < 2.544090 (Feigenbaum 1978)
    (2.555, 8),                     # 2.544090 < r < 2.564407
    (2.566, 16),                    # 2.564407 < r < 2.568759
])
def test_period_doubling_cascade(r: float, period: int) -> None:
    lr = logistic_run(r, transient=20000)
    assert (lr.kind, lr.period) == ("cycle", period)
    assert lr.lyapunov is not None and lr.lyapunov < 0


def test_two_cycle_boundary_at_root_six() -> None:
    edge = math.sqrt(6.0)  # a = 1 + √6 (May 1976), so r = √6 ≈ 2.449490
    assert edge == pytest.approx(2.449490, abs=1e-6)
    assert logistic_run(edge - 0.004, transient=30000).period == 2
    assert logistic_run(edge + 0.004, transient=30000).period == 4


def test_onset_of_chaos() -> None:
    # Feigenbaum 1978: a∞ ≈ 3.569946, i.e. r∞ ≈ 2.569946. Below it every orbit is periodic (λ ≤ 0);
    # beyond it chaos (λ > 0) sets in, interrupted by periodic windows.
    below = np.linspace(2.05, 2.5690, 60)
    batch = classify(LOGISTIC, {"r": below, "K": K}, 0.1 * K, scale=K, transient=20000)
    assert np.all(batch.lyapunov < 1e-3)
    assert "chaos" not in batch.kinds()
    for r in (2.6, 2.7, 2.9):  # chaotic parameters outside the main windows (a = 3.6, 3.7, 3.9)
        lr = logistic_run(r)
        assert lr.kind == "chaos" and lr.lyapunov > 0.1


def test_three_cycle_window_begins_at_root_eight() -> None:
    # May 1976: a stable 3-cycle appears at a = 1 + √8, i.e. r = √8 ≈ 2.828427 (tangent bifurcation)
    edge = math.sqrt(8.0)
    assert edge == pytest.approx(2.828427, abs=1e-6)
    inside = logistic_run(edge + 0.004, transient=20000)
    assert (inside.kind, inside.period) == ("cycle", 3)
    before = logistic_run(edge - 0.003, transient=20000)
    assert before.kind == "chaos"


def test_lyapunov_exponent_is_ln2_at_r3() -> None:
    # a = 4: λ = ln 2 exactly (Ulam–von Neumann conjugacy to the tent map). A finite orbit average
    # converges slowly; with 200 000 states the tolerance 0.01 is about 10 standard errors (seeded start).
    lr = long_run(LOGISTIC, {"r": 3.0, "K": K}, 0.2137 * K, scale=K, transient=1000, keep=200_000)
    assert lr.kind == "chaos"
    assert lr.lyapunov == pytest.approx(math.log(2.0), abs=0.01)


@pytest.mark.parametrize("r", [0.4, 1.0, 1.5, 1.9])
def test_ricker_fixed_point_stable_below_2(r: float) -> None:
    # Ricker (1954) map p·exp(r(1 − p/K)): f'(K) = 1 − r, so K is stable for 0 < r < 2 (May 1976)
    eq = [e for e in equilibria(RICKER, {"r": r, "K": K}, 3 * K) if e["value"] > 0]
    assert len(eq) == 1 and eq[0]["value"] == pytest.approx(K, rel=1e-9)
    assert eq[0]["multiplier"] == pytest.approx(1 - r, abs=1e-9)
    assert eq[0]["stable"]
    lr = long_run(RICKER, {"r": r, "K": K}, 5.0, scale=K)
    assert lr.kind in ("monotone", "damped-oscillation") and lr.states[0] == pytest.approx(K, rel=1e-6)


@pytest.mark.parametrize("r", [2.05, 2.3])
def test_ricker_loses_stability_at_2(r: float) -> None:
    eq = [e for e in equilibria(RICKER, {"r": r, "K": K}, 3 * K) if e["value"] > 0]
    assert not eq[0]["stable"] and abs(eq[0]["multiplier"]) > 1
    lr = long_run(RICKER, {"r": r, "K": K}, 5.0, scale=K, transient=20000)
    assert (lr.kind, lr.period) == ("cycle", 2)


def test_beverton_holt_globally_stable() -> None:
    # Beverton & Holt (1957): p_{n+1} = λp/(1 + (λ − 1)p/K) has the closed-form solution of a Möbius
    # map; every positive start tends to K for λ > 1 (f'(K) = 1/λ ∈ (0, 1): monotone approach)
    lambdas = np.array([1.05, 1.5, 2.0, 5.0, 50.0, 1e4])
    for start in (1e-3 * K, 0.5 * K, 3.0 * K, 1e3 * K):
        batch = classify(BH, {"lambda": lambdas, "K": K}, start, scale=K)
        assert set(batch.kinds()) == {"monotone"}
        np.testing.assert_allclose(batch.tail[-1], K, rtol=1e-6)
    for lam in lambdas:
        eq = [e for e in equilibria(BH, {"lambda": lam, "K": K}, 3 * K) if e["value"] > 0]
        assert eq[0]["multiplier"] == pytest.approx(1 / lam, rel=1e-6) and eq[0]["stable"]


def test_unbounded_and_extinction() -> None:
    geo = get_form("geometric")
    assert long_run(geo, {"r": 0.05}, 10.0, scale=10.0).kind == "unbounded"
    assert long_run(geo, {"r": -0.2}, 10.0, scale=10.0).kind == "extinction"
    # the discrete logistic beyond r = 3 (a > 4) leaves [0, (1 + r)K/r] and falls below zero
    assert logistic_run(3.3).kind == "extinction"
