"""Light requests under the server's time budget: callbacks posted as the browser posts them.

When the budget runs out, the answer leaves every output as it was and puts the notice on screen,
whether the engine's BudgetExceeded reached the callback's caller or a callback caught it as an
input error. The clock is replaced by a counter (see tests/test_budget.py), so "the budget runs
out at the second look" is exact. Data: the invented demo file (sample_data/).
"""

from __future__ import annotations

import json
from typing import Any

import pytest
from dash import Dash, Input, Output, html
from dash.exceptions import PreventUpdate

import growthcore.budget as budget_module
from growthcore.app import ids
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.heavy import HeavyConfig, HeavyRunner
from growthcore.app.request_budget import CONFIG_KEY, DEFAULT_LIGHT_BUDGET_S, BudgetedRegistration
from growthcore.app.server import DEMO_FILE, create_app, read_source
from growthcore.budget import BudgetExceeded, check_budget, current_budget, time_budget
from growthcore.errors import GrowthcoreInputError

SETTINGS = {"models": ["logistic", "gompertz", "ricker", "beverton-holt"], "method": "both", "error": "additive",
            "k_mode": "fitted", "terms": []}


class Clock:
    """Reads 0 for its first ``expire_after`` readings, far later afterwards."""

    def __init__(self, expire_after: float = float("inf")) -> None:
        self.expire_after = expire_after
        self.readings = 0

    def __call__(self) -> float:
        self.readings += 1
        return 0.0 if self.readings <= self.expire_after else 1e9


@pytest.fixture(scope="module")
def app() -> Dash:
    return create_app(light_budget_s=0.5, heavy=HeavyConfig(processes=False))


@pytest.fixture(scope="module")
def stores() -> dict[str, Any]:
    data = import_source(read_source(DEMO_FILE))
    fits = compute_fits(data, None, SETTINGS, None)
    label = next(f["label"] for f in fits["fits"] if f["model"] == "ricker" and f["status"] == "converged")
    return {"data": data, "fits": fits, "label": label}


def post(app: Dash, first_output: str, values: dict[str, Any], changed: str) -> dict[str, Any]:
    """Post the callback whose outputs start with ``first_output`` as the renderer does; the JSON answer."""
    key = next(k for k in app.callback_map if k.lstrip(".").startswith(first_output))
    cb = next(c for c in app._callback_list if c["output"] == key)
    outputs = [{"id": i, "property": p} for i, p in (o.rsplit(".", 1) for o in key.strip(".").split("..."))]

    def fill(specs: list[dict[str, Any]]) -> list[dict[str, Any]]:
        return [{**s, "value": values.get(f"{s['id']}.{s['property']}")} for s in specs]

    payload = {"output": key, "outputs": outputs if len(outputs) > 1 else outputs[0],
               "inputs": fill(cb["inputs"]), "state": fill(cb["state"]), "changedPropIds": [changed]}
    reply = app.server.test_client().post("/_dash-update-component", data=json.dumps(payload),
                                          content_type="application/json")
    assert reply.status_code == 200, reply.get_data(as_text=True)[:300]
    return reply.get_json()


def _requests(stores: dict[str, Any]) -> dict[str, tuple[str, dict[str, Any], str, str]]:
    """name -> (first output, values, changed input, the request the notice names)."""
    data, fits, label = stores["data"], stores["fits"], stores["label"]
    return {
        "every chosen form refitted": (f"{ids.CAPACITY}.data", {f"{ids.DATA}.data": data,
                                                                f"{ids.SETTINGS}.data": SETTINGS},
                                       f"{ids.DATA}.data", "Fitting the chosen forms"),
        "the candidate-terms panel": (f"{ids.G_CHANGE}.figure", {f"{ids.DATA}.data": data,
                                                                 f"{ids.SETTINGS}.data": SETTINGS,
                                                                 f"{ids.CAPACITY}.data": 4.0,
                                                                 f"{ids.CHANGE_AXIS}.value": "time"},
                                      f"{ids.CHANGE_AXIS}.value", "The change-per-step and candidate-terms panels"),
        "the dynamics panel": (f"{ids.DYN_SENTENCES}.children", {
            f"{ids.DYN_FIT}.value": label, f"{ids.FITS}.data": fits,
            f"{ids.DATA}.data": data, f"{ids.DYN_VISIBLE}.data": True}, f"{ids.DYN_FIT}.value", "The dynamics panel"),
        "a forecast": (f"{ids.FORECAST}.data", {
            f"{ids.FC_RUN}.n_clicks": 1, f"{ids.DYN_FIT}.value": label,
            f"{ids.FC_MODE}.value": "steps", f"{ids.FC_AMOUNT}.value": 20, f"{ids.FITS}.data": fits,
            f"{ids.DATA}.data": data}, f"{ids.FC_RUN}.n_clicks", "The forecast"),
    }


NAMES = ["every chosen form refitted", "the candidate-terms panel", "the dynamics panel", "a forecast"]


@pytest.mark.parametrize("name", NAMES)
def test_a_request_within_its_budget_answers_as_before(name: str, app: Dash, stores, monkeypatch) -> None:
    first, values, changed, _ = _requests(stores)[name]
    monkeypatch.setattr(budget_module, "monotonic", Clock())
    body = post(app, first, values, changed)
    assert body["response"] and "sideUpdate" not in body


@pytest.mark.parametrize("name", NAMES)
def test_a_request_out_of_time_leaves_the_panels_and_says_so(name: str, app: Dash, stores, monkeypatch) -> None:
    first, values, changed, request = _requests(stores)[name]
    clock = Clock(expire_after=2)  # the budget opens at the first reading and runs out at the second check
    monkeypatch.setattr(budget_module, "monotonic", clock)
    body = post(app, first, values, changed)
    assert clock.readings >= 3, "the request never looked at its budget"
    assert body.get("response", {}) == {}  # no output changes: the panels keep their last results
    side = body["sideUpdate"]
    assert side[ids.ERROR_BANNER] == {"hidden": False}
    text = side[ids.ERROR_TEXT]["children"]
    assert text.startswith(f"{request} ran out of the 0.5 s this server allows one request and was stopped; "
                           "the panels keep their last results. To stay within it, ")
    assert "Traceback" not in json.dumps(body) and "Something went wrong" not in text


def test_the_budget_is_the_servers_and_can_be_switched_off() -> None:
    assert create_app().server.config[CONFIG_KEY] == DEFAULT_LIGHT_BUDGET_S
    assert create_app(light_budget_s=None).server.config[CONFIG_KEY] is None
    with pytest.raises(ValueError, match="positive number of seconds"):
        create_app(light_budget_s=0)


def test_without_a_budget_a_request_never_reads_the_clock(stores, monkeypatch) -> None:
    app = create_app(light_budget_s=None)
    clock = Clock(expire_after=0)
    monkeypatch.setattr(budget_module, "monotonic", clock)
    body = post(app, f"{ids.CAPACITY}.data", {f"{ids.DATA}.data": stores["data"], f"{ids.SETTINGS}.data": SETTINGS},
                f"{ids.DATA}.data")
    assert body["response"][ids.FITS]["data"]["fits"] and clock.readings == 0


def _tiny_app(func) -> Dash:
    """One callback registered as register_all registers them."""
    app = Dash(__name__)
    app.layout = html.Div([html.Button(id="go"), html.Div(id="out"), html.Div(id=ids.ERROR_BANNER, hidden=True),
                           html.Div(id=ids.ERROR_TEXT)])
    app.server.config[CONFIG_KEY] = 0.5
    BudgetedRegistration(app).callback(Output("out", "children"), Input("go", "n_clicks"))(func)
    return app


def _click(app: Dash) -> dict[str, Any]:
    payload = {"output": "out.children", "outputs": {"id": "out", "property": "children"},
               "inputs": [{"id": "go", "property": "n_clicks", "value": 1}], "changedPropIds": ["go.n_clicks"]}
    reply = app.server.test_client().post("/_dash-update-component", data=json.dumps(payload),
                                          content_type="application/json")
    assert reply.status_code == 200
    return reply.get_json()


def _spend() -> None:
    check_budget()  # the budget's second reading: past the deadline under Clock(1)


def test_an_uncaught_run_out_gives_the_notice(monkeypatch) -> None:
    monkeypatch.setattr(budget_module, "monotonic", Clock(expire_after=1))

    def callback(_n):
        _spend()
        return "done"

    body = _click(_tiny_app(callback))
    assert body.get("response", {}) == {} and "ran out of the 0.5 s" in body["sideUpdate"][ids.ERROR_TEXT]["children"]


@pytest.mark.parametrize("then", ["returns a message", "prevents the update"])
def test_a_run_out_caught_by_the_callback_still_gives_the_notice(then: str, monkeypatch) -> None:
    monkeypatch.setattr(budget_module, "monotonic", Clock(expire_after=1))

    def callback(_n):
        try:
            _spend()
        except GrowthcoreInputError as exc:  # as a panel shows a refused input in place
            if then == "prevents the update":
                raise PreventUpdate from exc
            return f"could not: {exc}"
        return "done"

    body = _click(_tiny_app(callback))
    assert body.get("response", {}) == {} and "ran out of the 0.5 s" in body["sideUpdate"][ids.ERROR_TEXT]["children"]


def test_a_prevented_update_within_the_budget_stays_one(monkeypatch) -> None:
    monkeypatch.setattr(budget_module, "monotonic", Clock())

    def callback(_n):
        raise PreventUpdate

    app = _tiny_app(callback)
    payload = {"output": "out.children", "outputs": {"id": "out", "property": "children"},
               "inputs": [{"id": "go", "property": "n_clicks", "value": 1}], "changedPropIds": ["go.n_clicks"]}
    reply = app.server.test_client().post("/_dash-update-component", data=json.dumps(payload),
                                          content_type="application/json")
    assert reply.status_code == 204  # PreventUpdate as before, no notice


def test_heavy_jobs_pause_the_budget_and_bounded_work_spends_it() -> None:
    runner = HeavyRunner(HeavyConfig(slots=1, processes=False))
    with time_budget(30.0, "the request") as request:
        assert runner.run("a heavy job", current_budget) is None  # the job has its own budget
        assert runner.bounded("the F test", current_budget) is request
        request.deadline -= 60.0  # as if the request had already worked 60 s
        with pytest.raises(BudgetExceeded):
            runner.bounded("the F test", check_budget)
        runner.run("a heavy job", check_budget)  # waiting on a worker is not the request's work
