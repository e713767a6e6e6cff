"""Panel 7 callbacks called directly: dynamics, the chunked bootstrap with cancelling, forecasts and
the band on the trajectory, bootstrap intervals in the comparison table.

The demo data are invented (sample_data/); the 2-cycle series below is simulated in the test.
"""

from __future__ import annotations

import base64
import json
import math

import numpy as np
import pytest
from dash import no_update

from growthcore.app.callbacks.capacity import rounded
from growthcore.app.callbacks.comparison import draw_comparison
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.dynamics.bootstrap import bootstrap_step, next_chunk, progress_view, start_run, summaries
from growthcore.app.callbacks.dynamics.describe import dynamics_view
from growthcore.app.callbacks.dynamics.forecast import (
    band_on_trajectory,
    compute_forecast,
    forecast_notes,
    forecast_request,
)
from growthcore.app.callbacks.dynamics.which_fit import choose_fit, done_for, find_fit, fit_signature, rebuild
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.callbacks.panels import draw_panels
from growthcore.app.server import DEMO_FILE, create_app, read_source
from growthcore.app.state import series_from_store
from growthcore.explore import capacity_range
from growthcore.uncertainty import bootstrap

FORMS = ["logistic", "gompertz", "ricker", "beverton-holt"]


def _settings(method: str = "increments", models: list[str] | None = None) -> dict:
    return {"models": models or FORMS, "terms": [], "method": method, "error": "additive", "k_mode": "held"}


@pytest.fixture(scope="module")
def demo() -> dict:
    return import_source(read_source(DEMO_FILE))


@pytest.fixture(scope="module")
def k_demo(demo: dict) -> float:
    return rounded(capacity_range(series_from_store(demo)).estimate)


@pytest.fixture(scope="module")
def fits(demo: dict, k_demo: float) -> dict:
    return compute_fits(demo, None, _settings(), k_demo)


def _text(component: object) -> str:
    """All text inside a Dash component tree."""
    if component is None:
        return ""
    if isinstance(component, (str, int, float)):
        return str(component)
    if isinstance(component, (list, tuple)):
        return " ".join(_text(c) for c in component)
    return _text(getattr(component, "children", None))


def _run(boot: dict, done: dict, fits_store: dict, data: dict, *, cancel_after: int | None = None,
         limit: int = 200) -> tuple[dict, dict, int]:
    """Drive the bootstrap as the timer would: one step per answer until it stops."""
    steps = 0
    while True:
        cancel = 1 if cancel_after is not None and steps >= cancel_after else 0
        b, d, more = bootstrap_step(boot, done, cancel, fits_store, data, None)
        boot = b if b is not no_update else boot
        done = d if d is not no_update else done
        steps += 1
        if not more or steps > limit:
            return boot, done, steps


# ----------------------------------------------------------------------------- which fit, and when

def test_signature_follows_k_exclusions_and_form(demo: dict, k_demo: float, fits: dict) -> None:
    f = fits["fits"][0]
    again = compute_fits(demo, None, _settings(), k_demo)
    assert fit_signature(fits, f) == fit_signature(again, again["fits"][0])
    other_k = compute_fits(demo, None, _settings(), rounded(1.1 * k_demo))
    assert fit_signature(fits, f) != fit_signature(other_k, other_k["fits"][0])
    excl = {"key": demo["key"], "excluded": {"5": "excluded by the user"}, "history": []}
    fewer = compute_fits(demo, excl, _settings(), k_demo)
    assert fit_signature(fits, f) != fit_signature(fewer, fewer["fits"][0])
    assert fit_signature(fits, fits["fits"][0]) != fit_signature(fits, fits["fits"][1])


def test_picker_prefers_the_best_difference_form_and_keeps_a_choice(fits: dict) -> None:
    options, value = choose_fit(fits, None)
    assert [o["value"] for o in options] == [f["label"] for f in fits["fits"]]
    best = [r for r in fits["comparison"] if r.get("best")]
    assert best and value == f"{best[0]['model']} ({best[0]['method']})"
    assert choose_fit(fits, "ricker (increments)")[1] == "ricker (increments)"
    assert choose_fit(None, None) == ([], None)


# ----------------------------------------------------------------------------- dynamics

def test_logistic_equilibria_multiplier_is_one_minus_r(demo: dict, k_demo: float, fits: dict) -> None:
    sentences, eq_table, cobweb_fig, sweep_fig, derived = dynamics_view(
        fits, "logistic (increments)", demo, None, {}, None)
    r = fits["fits"][0]["parameters"]["r"]["value"]
    text = _text(sentences)
    assert "steady level" in text and "monotonically" in text
    # identity: f(p) = p + r·p(1 − p/K) has f'(K) = 1 − r and f'(0) = 1 + r
    assert f"{1 - r:.3g}" in _text(eq_table) and f"{1 + r:.3g}" in _text(eq_table)
    assert "unstable" in _text(eq_table) and "stable" in _text(eq_table)
    stable = [t for t in cobweb_fig["data"] if t.get("name") == "stable equilibrium"][0]
    assert stable["x"][0] == pytest.approx(k_demo, rel=1e-6)
    line = [s for s in sweep_fig["layout"]["shapes"] if s["type"] == "line"][0]
    assert line["x0"] == pytest.approx(r)
    assert "caution under Forecast" in _text(derived)


def test_two_cycle_said_in_words() -> None:
    """May (1976), Nature 261:459: the logistic map has a stable 2-cycle for 2 < r < √6 (our r = a − 1)."""
    k, r = 100.0, 2.2
    p, rows = 30.0, []
    rng = np.random.default_rng(3)
    for n in range(40):
        rows.append(f"{n},{p * (1 + rng.normal(0, 0.002)):.5f}")
        p = p + r * p * (1 - p / k)
    csv = "Generation,Index (count)\n" + "\n".join(rows)
    data = import_source({"filename": "simulated_cycle.csv", "b64": base64.b64encode(csv.encode()).decode(),
                          "max_bytes": 10_000_000})
    store = compute_fits(data, None, _settings(models=["logistic"]), k)
    out = dynamics_view(store, "logistic (increments)", data, None, {}, None)
    text = _text(out[0])
    assert "2-cycle between" in text and "rather than a steady level" in text
    # the 2-cycle of x' = a·x(1 − x) is x± = (a + 1 ± √((a + 1)(a − 3))) / (2a); here p = (1 + r)K/r · x, a = 1 + r
    r_fit = store["fits"][0]["parameters"]["r"]["value"]
    a = 1 + r_fit
    scale = a * k / r_fit
    lo, hi = (scale * (a + 1 + sign * math.sqrt((a + 1) * (a - 3))) / (2 * a) for sign in (-1, 1))
    assert f"between {lo:.4g} and {hi:.4g}" in text
    assert "unstable" in _text(out[1])  # f'(K) = 1 − r = −1.2: |f'| > 1


def test_curve_form_has_no_cobweb(demo: dict, k_demo: float) -> None:
    store = compute_fits(demo, None, _settings("trajectory", ["logistic-curve"]), k_demo)
    out = dynamics_view(store, store["fits"][0]["label"], demo, None, {}, None)
    assert "closed-form curve" in out[2]["layout"]["meta"]["message"]
    assert "steady level" in _text(out[0])


def test_doubling_time_matches_its_closed_form(demo: dict, k_demo: float, fits: dict) -> None:
    """Per-step growth factor g = 1 + r(1 − p_s/K); doubling time = h·ln 2 / ln g (definition)."""
    out = dynamics_view(fits, "logistic (increments)", demo, None, {}, 2.0)
    r = fits["fits"][0]["parameters"]["r"]["value"]
    p_s, h = demo["p"][0], demo["t"][1] - demo["t"][0]
    expected = h * math.log(2) / math.log(1 + r * (1 - p_s / k_demo))
    text = _text(out[4])
    # no bootstrap yet: delta-method intervals
    assert f"{expected:.4g}" in text and "Time to reach 2" in text and "(delta method)" in text


# ----------------------------------------------------------------------------- bootstrap in chunks

def test_run_refuses_bad_requests(fits: dict) -> None:
    assert start_run(1, 0, 5, 1, "logistic (increments)", fits)["state"] == "refused"
    assert start_run(1, 0, 1e9, 1, "logistic (increments)", fits)["state"] == "refused"
    assert start_run(1, 0, 100, -3, "logistic (increments)", fits)["state"] == "refused"
    assert start_run(1, 0, 100.5, 3, "logistic (increments)", fits)["state"] == "refused"
    assert start_run(1, 0, 100, 3, "no such fit", fits)["state"] == "refused"
    ok = start_run(1, 0, "300", 3, "logistic (increments)", fits)
    assert ok["state"] == "running" and ok["requested"] == 300


def test_chunked_run_equals_one_engine_call(demo: dict, k_demo: float, fits: dict) -> None:
    """The seeded draws do not depend on the chunking (engine contract), so the merged chunks repeat
    one bootstrap of the same fit; the percentile interval is numpy's 2.5 and 97.5 percentiles."""
    label = "ricker (increments)"
    boot, done, steps = _run(start_run(1, 0, 400, 11, label, fits), {}, fits, demo)
    assert boot["state"] == "complete" and boot["done"] == 400 and steps >= 3  # progress in several steps
    series, result = rebuild(demo, None, fits, find_fit(fits, label))
    direct = bootstrap(result, series=series, resamples=400, seed=11)
    sig = fit_signature(fits, find_fit(fits, label))
    stored = done_for(done, sig)
    np.testing.assert_allclose(stored.samples, direct.samples, rtol=1e-12)
    lo, hi = np.percentile(direct.good()["r"], [2.5, 97.5])
    value, top, status, table = progress_view(boot, summaries(done), fits, label)
    assert (value, top) == ("400", "400") and status.startswith("Done: 400 of 400")
    assert f"{lo:.4g} to {hi:.4g}" in _text(table)
    t_ci = fits["fits"][2]["parameters"]["r"]["ci95"]
    assert f"{t_ci[0]:.4g} to {t_ci[1]:.4g}" in _text(table)  # the t-based one beside it


def test_cancel_keeps_the_refits_done(demo: dict, fits: dict) -> None:
    label = "gompertz (increments)"
    boot, done, steps = _run(start_run(1, 0, 2000, 5, label, fits), {}, fits, demo, cancel_after=2)
    assert boot["state"] == "cancelled" and 0 < boot["done"] < 2000 and steps == 3
    value, top, status, table = progress_view(boot, summaries(done), fits, label)
    assert status.startswith(f"Cancelled: {boot['done']} of 2000") and "only the refits done" in status
    assert f"partial: {boot['done']} of 2000" in _text(table)


def test_a_changed_fit_stops_the_run(demo: dict, k_demo: float, fits: dict) -> None:
    boot, _, more = bootstrap_step(start_run(1, 0, 1000, 5, "logistic (increments)", fits), {}, 0,
                                      fits, demo, None)
    assert more
    moved = compute_fits(demo, None, _settings(), rounded(0.9 * k_demo))
    boot, done, more = bootstrap_step(boot, {}, 0, moved, demo, None)
    assert not more and boot["state"] == "stopped" and "fit changed" in boot["message"]


def test_chunks_stay_small_enough_for_progress() -> None:
    assert next_chunk(50, 0.001, 1000) == 50       # capped at a twentieth of the run
    assert next_chunk(500, 4.0, 100_000) == 50     # slow answers shrink the next chunk
    assert next_chunk(50, 100.0, 1000) == 10


def test_bootstrap_changes_sentences_and_comparison(demo: dict, k_demo: float, fits: dict) -> None:
    label = "logistic (increments)"
    _, done, _ = _run(start_run(1, 0, 300, 2, label, fits), {}, fits, demo)
    out = dynamics_view(fits, label, demo, None, done, None)
    assert "t-based until a bootstrap" not in _text(out[0])
    assert "bootstrap" in json.dumps(out[3]["layout"]) or out[3]["layout"]["shapes"]
    derived = _text(out[4])
    assert "run the bootstrap" not in derived and " to " in derived
    table, _ = draw_comparison(fits, None, summaries(done))
    assert "r bootstrap [" in _text(table)
    moved = compute_fits(demo, None, _settings(), rounded(0.9 * k_demo))
    # stale intervals are not shown
    assert "bootstrap [" not in _text(draw_comparison(moved, None, summaries(done))[0])


# ----------------------------------------------------------------------------- forecast

def test_forecast_requests_are_checked() -> None:
    assert forecast_request("steps", 0, None)["error"].startswith("Steps ahead")
    assert forecast_request("steps", 2.5, None)["error"].startswith("Steps ahead")
    assert forecast_request("span", -1, None)["error"].startswith("The time span")
    assert forecast_request("steps", 5, -2)["error"].startswith("The plausibility bound")
    assert forecast_request("span", 30, "") == {"mode": "span", "amount": 30.0, "bound": None}


def test_forecast_band_on_the_trajectory(demo: dict, k_demo: float, fits: dict) -> None:
    label = "logistic (increments)"
    store = compute_forecast(forecast_request("steps", 8, 5.0), label, fits, demo, None, {})
    pts = store["points"]
    h = demo["t"][1] - demo["t"][0]
    assert len(pts) == 8 and pts[0]["t"] == pytest.approx(demo["t"][-1] + h)
    assert all(p["lo"] <= p["p"] <= p["hi"] for p in pts)
    assert any("past the last observation" in w for w in store["warnings"])
    assert store["caution"].startswith("Forecasts from a fitted growth law")
    assert "plausibility bound 5" in " ".join(store["warnings"])
    notes = _text(forecast_notes(store, fits))
    assert "95% prediction band" in notes and "normal approximation" in notes
    figure = draw_panels(fits, k_demo, demo, None)[0]
    with_band = band_on_trajectory(figure, store, fits)
    assert len(with_band["data"]) == len(figure["data"]) + 3
    assert any(s.get("x0") == demo["t"][-1] for s in with_band["layout"]["shapes"])
    preview = compute_fits(demo, None, _settings(), rounded(1.05 * k_demo))
    assert band_on_trajectory(figure, store, preview) is figure  # hidden while the fit differs
    assert "redrawn" in _text(forecast_notes(store, preview))


def test_forecast_errors_are_messages(demo: dict, fits: dict) -> None:
    store = compute_forecast(forecast_request("span", 1.0, None), "logistic (increments)", fits, demo, None, {})
    assert "shorter than one step" in store["error"]
    assert "flag-warn" in repr(forecast_notes(store, fits))


def test_registered_on_the_app() -> None:
    app = create_app()
    outputs = " ".join(app.callback_map)
    for name in ("store-bootstrap.data", "store-forecast.data", "panel-cobweb.figure", "forecast-notes.children"):
        assert name in outputs


def test_summaries_leave_the_refits_out(demo: dict, fits: dict) -> None:
    """What rides along with every table update stays small: counts and intervals, no refits."""
    _, done, _ = _run(start_run(1, 0, 1000, 4, "logistic (increments)", fits), {}, fits, demo)
    small = summaries(done)
    assert len(json.dumps(small)) < 2000 < len(json.dumps(done))
    entry = next(iter(small.values()))
    assert entry["summary"]["done"] == 1000 and "result" not in entry


def test_export_record_carries_the_panel_bootstrap_and_forecast(demo: dict, k_demo: float, fits: dict) -> None:
    """What panel 7 shows is what the exported record holds: the bootstrap is reproduced from its seed
    and count (resample b is seeded by (seed, b): engine contract), the forecast from its request."""
    from growthcore.app.callbacks import export as ex

    label = "ricker (increments)"
    boot, done, _ = _run(start_run(1, 0, 200, 5, label, fits), {}, fits, demo)
    request = forecast_request("steps", 6, None)
    store = compute_forecast(request, label, fits, demo, None, done)
    settings = _settings()
    record = ex.session_record(demo, None, settings, k_demo, forms=["ricker"], forecast_store=store, boot_done=done)
    (ricker,) = [f for f in record["fits"] if f["model"] == "ricker"]
    assert record["settings"]["bootstrap"] == 200 and record["settings"]["seed"] == 5
    assert record["settings"]["forecast_steps"] == 6
    panel = done_for(done, fit_signature(fits, find_fit(fits, label)))
    lo, hi = panel.interval("r")
    assert ricker["parameters"]["r"]["ci95_bootstrap"] == pytest.approx([lo, hi], rel=1e-9)
    assert len(ricker["forecast"]) == 6
    assert [round(p["t"], 9) for p in ricker["forecast"]] == [round(p["t"], 9) for p in store["points"]]


def test_correlation_of_the_estimates_is_shown_as_the_engine_computes_it(demo: dict, k_demo: float) -> None:
    """The table shows FitResult.correlation (s²(JᵀJ)⁻¹ scaled to unit diagonal: identity check on the
    diagonal and symmetry) for the fit in the panel, to three significant digits."""
    store = compute_fits(demo, None, _settings(method="trajectory", models=["logistic"]), k_demo)
    label = store["fits"][0]["label"]
    view = dynamics_view(store, label, demo, None, None, None)
    text = _text(view[4])
    assert "Correlation of the estimates" in text
    _, result = rebuild(demo, None, store, find_fit(store, label))
    corr = result.correlation
    np.testing.assert_allclose(np.diag(corr), 1.0, rtol=1e-12)
    np.testing.assert_allclose(corr, corr.T, rtol=1e-12)
    for v in corr[np.triu_indices_from(corr, 1)]:
        assert f"{v:.3g}" in text
