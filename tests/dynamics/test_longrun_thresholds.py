"""The long-run kind follows the multiplier near |f'| = 1, so period doublings are found where the
literature puts them.

Reference: the logistic map x → a·x(1 − x) doubles its period at a = 3, 1 + √6 ≈ 3.449490, 3.544090 and
3.564407 (May 1976, Nature 261:459; the last two values to six decimals from memory, as widely tabulated).
Our logistic form p + r·p(1 − p/K) is that map with a = 1 + r (conjugate under x = r·p / ((1 + r)·K)).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.dynamics.interpret import describe
from growthcore.dynamics.longrun import KINDS, classify, long_run
from growthcore.models import get_form

LOGISTIC = get_form("logistic")
# (threshold in r = a − 1, period below, period above)
DOUBLINGS = [(2.0, 1, 2), (math.sqrt(6.0), 2, 4), (2.544090, 4, 8), (2.564407, 8, 16)]


@pytest.mark.parametrize(("r_c", "below", "above"), DOUBLINGS)
def test_period_doublings_of_the_logistic_map_within_1e_4(r_c: float, below: int, above: int) -> None:
    r = np.array([r_c - 1e-4, r_c + 1e-4])
    batch = classify(LOGISTIC, {"r": r, "K": 100.0}, 30.0, scale=100.0)
    periods = [int(p) or 1 if KINDS[int(k)] in ("monotone", "damped-oscillation") else int(p)
               for k, p in zip(batch.kind, batch.period, strict=True)]
    assert periods == [below, above]


def test_near_the_first_doubling_the_sentence_agrees_with_the_multiplier() -> None:
    # r = 1.999: f'(K) = 1 − r = −0.999, a stable fixed point approached by damped oscillation
    lr = long_run(LOGISTIC, {"r": 1.999, "K": 100.0}, 30.0, scale=100.0)
    assert lr.kind == "damped-oscillation" and lr.states[0] == pytest.approx(100.0, rel=1e-12)

    class Fit:  # the few attributes describe() reads from a fit
        values = {"r": 1.999, "K": 100.0}
        form = LOGISTIC

    eq = [{"value": 0.0, "multiplier": 2.999, "stable": False}, {"value": 100.0, "multiplier": -0.999, "stable": True}]
    text = " ".join(describe(Fit(), lr, eq, None))
    assert "cycle" not in text and "-0.999" in text and "damped" in text


def test_a_stable_two_cycle_reports_its_two_distinct_states() -> None:
    # r = 2.2 (a = 3.2): the 2-cycle of the logistic map, x = (a + 1 ± √((a − 3)(a + 1))) / (2a) (closed form)
    a = 3.2
    lr = long_run(LOGISTIC, {"r": a - 1.0, "K": 1.0}, 0.3, scale=1.0)
    assert lr.kind == "cycle" and lr.period == 2
    root = math.sqrt((a - 3.0) * (a + 1.0))
    x = sorted(((a + 1 - root) / (2 * a), (a + 1 + root) / (2 * a)))
    scale = a / (a - 1.0)  # p = x·(1 + r)·K / r with K = 1
    assert list(lr.states) == pytest.approx([v * scale for v in x], rel=1e-10)
