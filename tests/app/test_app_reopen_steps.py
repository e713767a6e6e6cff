"""Reopening a record sets panel 7 as the record's settings ask: its bootstrap and seed, its forecast and
bound, the level to reach, each within this server's limits, and says what it could not set.

The reference is the command line: the kept v1 record was written by ``growthcore fit`` with a bootstrap
of 20 resamples, a forecast of 3 steps and a level of 300; the forecast panel 7 draws again must put the
fit's path where the record does. The data in the record are the invented island census (sample_data/README.md).
"""

from __future__ import annotations

import base64
import os
from typing import Any

import pytest
from dash import no_update

from growthcore.app import ids
from growthcore.app.callbacks import export as ex
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.dynamics.forecast import DEFAULT_AMOUNT
from growthcore.app.callbacks.dynamics.reopened import steps_from_settings
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.callbacks.follow import follow
from growthcore.app.callbacks.live import View, panel_seven
from growthcore.app.callbacks.settings import build_settings
from growthcore.app.components.dynamics import MIN_RESAMPLES
from growthcore.app.server import DEMO_FILE, create_app, read_source
from growthcore.limits import Limits
from growthcore.workflow import Extras

FIXTURE = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "fixtures", "fit-record-v1.json")


def _upload(text: str, name: str) -> tuple[Any, ...]:
    return ex.on_record_upload("data:application/json;base64," + base64.b64encode(text.encode()).decode(), name)


@pytest.fixture(scope="module")
def reopened() -> tuple[Any, ...]:
    with open(FIXTURE, encoding="utf-8") as fh:
        return _upload(fh.read(), "fit-record-v1.json")


def test_the_records_later_steps_reach_panel_seven(reopened: tuple[Any, ...]) -> None:
    data, forecast, message = reopened[1], reopened[14], str(reopened[-1])
    later = data["later"]
    assert (later["resamples"], later["seed"], later["level"]) == (20, 20240601, 300.0)
    assert later["request"] == {"mode": "steps", "amount": 3, "bound": None}
    assert forecast == {"request": later["request"], "key": data["key"]}
    assert "Its bootstrap (20 resamples, seed 20240601) is set in panel 7; press Run bootstrap" in message
    assert "Its forecast (3 steps) is drawn again with the fits." in message
    # once the data are on the page, panel 7's fields follow the record: bound, level, length, mode, resamples, seed
    fields = follow({f"{ids.DATA}.data"}, data, None, None, None, None, 5.0, 2.0, 40)[1:7]
    assert fields == (None, 300.0, 3, "steps", 20, 20240601)


def test_the_forecast_drawn_again_follows_the_records_path(reopened: tuple[Any, ...]) -> None:
    """The fits recomputed from the record and the forecast request: panel 7's forecast puts each chosen
    fit's path at the record's values (its band differs until the bootstrap is repeated)."""
    record = ex.parse_record(base64.b64decode(_b64(FIXTURE)), name="fit-record-v1.json")
    data, exclusions = reopened[1], reopened[2]
    forms, constant, terms, method, error, k_mode = reopened[7:13]
    settings = build_settings(forms, constant, terms, method, error, k_mode)[0]
    capacity = update_capacity(None, None, None, None, data, settings, None, None, pending=reopened[13])[0]
    fits = compute_fits(data, exclusions, settings, capacity)
    checked = 0
    for label in ("logistic (increments)", "ricker (trajectory)"):
        out = panel_seven(fits, data, exclusions, View(dyn_label=label, forecast=reopened[14]))
        store = out[-2]
        assert store["request"] == reopened[14]["request"] and len(store["points"]) == 3
        model, method_name = label.replace(")", "").split(" (")
        stored = next(f for f in record["fits"] if (f["model"], f["method"]) == (model, method_name))
        for got, want in zip(store["points"], stored["forecast"], strict=True):
            assert got["t"] == pytest.approx(want["t"], rel=1e-12)
            assert got["p"] == pytest.approx(want["p"], rel=1e-6)
        checked += 1
    assert checked == 2


def _b64(path: str) -> bytes:
    with open(path, "rb") as fh:
        return base64.b64encode(fh.read())


@pytest.mark.parametrize(("settings", "expected", "note"), [
    ({"bootstrap": 5_000, "seed": 3}, dict(resamples=None, seed=None),
     "Its bootstrap of 5,000 resamples is not repeated: this server runs at most 2,000."),
    ({"bootstrap": 5, "seed": 3}, dict(resamples=None), f"panel 7 runs {MIN_RESAMPLES} or more"),
    ({"forecast_steps": 2001}, dict(request=None),
     "Its forecast of 2,001 steps is not drawn: panel 7 forecasts at most 500"),
    ({"forecast_span": 12.5, "bound": 400.0}, dict(request={"mode": "span", "amount": 12.5, "bound": 400.0}),
     "Its forecast (a time span of 12.5, bound 400) is drawn again"),
    ({"levels": [300.0, 350.0, 400.0]}, dict(level=300.0), "300 is set; the record also names 350, 400."),
    ({"seed": -1, "bootstrap": 100}, dict(resamples=None, request=None),
     "Panel 7 is left as it was: the record's settings.seed must be 0 or larger; got -1."),
], ids=["over-the-servers-resamples", "under-panel-sevens-resamples", "over-the-servers-steps", "span-and-bound",
        "several-levels", "a-bad-setting"])
def test_what_panel_seven_cannot_take_is_said(settings: dict[str, Any], expected: dict[str, Any], note: str) -> None:
    later = steps_from_settings(settings, max_resamples=2000, max_steps=500)
    for key, value in expected.items():
        assert later[key] == value, key
    assert any(note in n for n in later["notes"]), later["notes"]


def test_a_record_without_later_steps_leaves_panel_seven_fresh() -> None:
    later = steps_from_settings({"models": ["logistic"]}, max_resamples=2000, max_steps=500)
    assert later == {"resamples": None, "seed": None, "request": None, "level": None, "notes": []}
    data = {**import_source(read_source(DEMO_FILE)), "later": later}
    assert follow({f"{ids.DATA}.data"}, data, None, None, None, None, 5.0, 2.0, 40)[1:7] == (
        None, None, DEFAULT_AMOUNT, no_update, no_update, no_update)


def test_the_apps_own_later_steps_come_back_as_they_were_exported() -> None:
    """Panel 7's finished bootstrap and drawn forecast -> the record's settings -> panel 7 again."""
    done = {"sig": {"summary": {"done": 400, "seed": 11}}}
    forecast_store = {"request": {"mode": "span", "amount": 6.5, "bound": 9.0}}
    extras = ex.later_steps(forecast_store, done)
    later = steps_from_settings(extras.settings(), max_resamples=2000, max_steps=500)
    assert (later["resamples"], later["seed"]) == (400, 11)
    assert later["request"] == forecast_store["request"]
    assert Extras.from_settings(extras.settings()) == extras


def test_the_limits_are_the_answering_servers() -> None:
    """A server configured for fewer resamples and shorter forecasts sets only what it would run."""
    with open(FIXTURE, encoding="utf-8") as fh:
        text = fh.read()
    app = create_app(limits=Limits(max_resamples=10, max_forecast_steps=2))
    with app.server.app_context():
        out = _upload(text, "fit-record-v1.json")
    later, message = out[1]["later"], str(out[-1])
    assert later["resamples"] is None and later["request"] is None and out[14] is None
    assert "this server runs at most 10." in message and "panel 7 forecasts at most 2." in message
