"""Callbacks called directly: import, settings, K, exclusions, fits, panels and the table."""

from __future__ import annotations

import base64
import json
import os

import pytest
from dash import no_update
from dash.exceptions import PreventUpdate

from growthcore.app import ids
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.callbacks.comparison import draw_comparison
from growthcore.app.callbacks.data import import_source, on_import, refused_message
from growthcore.app.callbacks.exclusions import clicked_index, update_exclusions
from growthcore.app.callbacks.explore import explore_panels
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.callbacks.live import View, live_update
from growthcore.app.callbacks.panels import draw_panels
from growthcore.app.callbacks.settings import build_settings, check_terms, expand_forms
from growthcore.app.components.comparison import sort_rows
from growthcore.app.server import DEMO_FILE, read_source
from growthcore.app.state import series_from_store
from growthcore.compare import compare
from growthcore.explore import Candidate, candidate_fit
from growthcore.fit.forms import fit_forms

CSV = "Day,Cover (%)\n" + "\n".join(f"{d},{v:.3f}" for d, v in zip(range(12), [2, 3.1, 4.7, 7, 10.2, 14, 18.5,
                                                                              22, 24.9, 26.6, 27.5, 28.1], strict=True))


def upload(text: str, name: str = "invented_cover.csv") -> str:
    return "data:text/csv;base64," + base64.b64encode(text.encode()).decode()


@pytest.fixture(scope="module")
def demo() -> dict:
    return import_source(read_source(DEMO_FILE))


@pytest.fixture(scope="module")
def settings() -> dict:
    return build_settings(["logistic", "gompertz", "ricker", "beverton-holt"], [], "", "increments", "additive",
                          "held")[0]


def test_demo_reads_with_units(demo: dict) -> None:
    assert demo["source"] == "algae_photobioreactor.csv"
    assert demo["time_unit"] == "h" and demo["value_unit"] == "g/L" and demo["quantity"] == "Dry weight"
    assert len(demo["t"]) == 40 and "Import report" in demo["report_text"]
    json.dumps(demo)


def test_upload_replaces_the_data_and_keeps_the_choices_that_fit(demo: dict) -> None:
    # "Time" was chosen for the file before; the new file has no such column, so that choice alone is
    # dropped (its field cleared, the message says so) while the time unit chosen survives
    out = on_import(upload(CSV), 0, None, "invented_cover.csv", read_source(DEMO_FILE), demo, "Time", None, None,
                    "d", None, trigger=ids.UPLOAD)
    source, data = out[0], out[1]
    assert source["filename"] == "invented_cover.csv"
    assert data["source"] == "invented_cover.csv" and data["value_unit"] == "%" and data["time_unit"] == "d"
    assert out[6] == data["name"]
    assert out[8] is None and all(v is no_update for v in out[9:14])
    assert "Not in this file, so read as guessed: time column 'Time'" in str(out[2])
    assert out[14] is None  # the upload's contents cleared: the same file dropped again is read again


def test_a_failed_upload_becomes_the_file_the_choices_apply_to(demo: dict) -> None:
    two_values = "Day,Cover (%),Height (cm)\n" + "\n".join(f"{d},{2 + d},{d * 0.5 + 1}" for d in range(8))
    # the value column chosen for the file before is this file's time column: the read is refused
    bad = on_import(upload(two_values), 0, None, "invented_two.csv", read_source(DEMO_FILE), demo, None,
                    "Day", None, None, None, trigger=ids.UPLOAD)
    assert bad[1] is no_update and bad[0]["filename"] == "invented_two.csv"
    assert "read it again" in str(bad[2]) and "algae_photobioreactor.csv" in str(bad[2])
    # the user corrects the value column and asks to read again: the new file is read, not the old one
    again = on_import(None, 1, None, None, bad[0], demo, None, "Height", None, None, None, trigger=ids.MAP_APPLY)
    assert again[1]["source"] == "invented_two.csv" and again[1]["value_column"] == "Height (cm)"


def test_malformed_upload_keeps_the_previous_data_and_names_the_file(demo: dict) -> None:
    out = on_import(upload("just words\nand more words\n"), 0, None, "notes.csv", read_source(DEMO_FILE), demo,
                    None, None, None, None, None, trigger=ids.UPLOAD)
    assert out[1] is no_update
    text = str(out[2])
    assert "Not read." in text and "notes.csv" in text and "algae_photobioreactor.csv" in text


def test_upload_over_the_limit_is_refused(demo: dict) -> None:
    out = on_import(upload(CSV), 0, None, "big.csv", None, demo, None, None, None, None, None,
                    trigger=ids.UPLOAD, max_bytes=50)
    assert out[1] is no_update and "over the limit" in str(out[2])


def test_bad_custom_term_shows_the_parser_message_in_place() -> None:
    good, errors = check_terms("p*(1 - p/K)\n\np*(K-")
    assert good == ["p*(1 - p/K)"] and len(errors) == 1 and errors[0].startswith("line 3:")
    assert "^" in errors[0]
    settings, message, _ = build_settings(["logistic", "custom"], [], "p*(K-", "increments", "additive", "held")
    assert settings["models"] == ["logistic"]
    assert "^" in str(message) and "left out" in str(message)
    settings, _, _ = build_settings(["custom"], [], "p*(K-p)", "trajectory", "log", "held")
    assert settings["models"] == ["custom"] and settings["terms"] == ["p*(K-p)"]


def test_constant_term_variants_follow_each_difference_form() -> None:
    assert expand_forms(["logistic", "logistic-curve"], True) == ["logistic", "logistic+c", "logistic-curve"]


def test_capacity_initial_then_input_then_drag(demo: dict, settings: dict) -> None:
    first = update_capacity(ids.DATA, None, None, None, demo, settings, None, None)
    k0, _, slider, low, high = first[:5]
    assert k0 == slider and low == 0 and high > max(demo["p"])
    typed = update_capacity(ids.K_INPUT, 3.5, None, None, demo, settings, None, k0)
    assert typed[0] == 3.5 and typed[1] is no_update and typed[2] == 3.5
    dragged = update_capacity(ids.K_DROP, None, None, {"shapes[0].yanchor": 3.91},
                              demo, settings, None, 3.5)
    assert dragged[0] == 3.91 and dragged[1] == 3.91
    zoom = update_capacity(ids.K_DROP, None, None, {"xaxis.range[0]": 3}, demo, settings, None, 3.5)
    assert zoom[0] is no_update
    bad = update_capacity(ids.K_INPUT, -2, None, None, demo, settings, None, 3.5)
    assert bad[0] is no_update and "positive" in bad[-1]
    fitted = update_capacity(ids.K_FROM_FIT, None, None, None, demo, settings, None, 3.5)
    assert fitted[0] > 3.0 and "logistic" in fitted[-1]


def test_exclusions_toggle_undo_and_reset(demo: dict) -> None:
    click = {"points": [{"customdata": [7, 9], "x": 84, "y": 0.4}]}
    assert clicked_index(click) == 7 and clicked_index({"points": [{"x": 1}]}) is None
    state = update_exclusions(ids.G_TRAJECTORY, None, demo, click)
    assert state["excluded"] == {"7": "excluded by the user"}
    assert series_from_store(demo, state).reason(7) == "excluded by the user"
    again = update_exclusions(ids.G_CHANGE, state, demo, click)
    assert again["excluded"] == {}
    undone = update_exclusions(ids.EXCLUSION_UNDO, again, demo)
    assert undone["excluded"] == {"7": "excluded by the user"}
    cleared = update_exclusions(ids.EXCLUSION_CLEAR, undone, demo)
    assert cleared["excluded"] == {}
    by_row = update_exclusions(ids.EXCLUDE_ROW_BUTTON, cleared, demo, restore_index=9)  # row 9 is point 7
    assert by_row["excluded"] == {"7": "excluded by the user"}
    assert update_exclusions(ids.EXCLUDE_ROW_BUTTON, cleared, demo, restore_index=999) is None
    other = dict(demo, key="another file")
    assert update_exclusions(ids.DATA, undone, other)["excluded"] == {}
    assert series_from_store(other, undone).excluded == {}


def test_fits_store_carries_engine_numbers(demo: dict, settings: dict) -> None:
    store = compute_fits(demo, None, settings, 4.2)
    json.dumps(store, allow_nan=False)
    series = series_from_store(demo)
    direct = compare(fit_forms(series, settings["models"], method="increments", capacity=4.2))
    assert [r["model"] for r in store["comparison"]] == [r.model for r in direct]
    assert [r["aicc"] for r in store["comparison"]] == [r.aicc for r in direct]
    assert sum(r["best"] for r in store["comparison"]) == 1
    logistic = next(f for f in store["fits"] if f["model"] == "logistic")
    assert logistic["parameters"]["K"] == {**logistic["parameters"]["K"], "value": 4.2, "fixed": True}


def test_a_typed_k_is_answered_by_one_reply_with_every_panel(demo: dict, settings: dict) -> None:
    first = live_update(ids.DATA, None, None, None, demo, None, settings, None, None, None, None, View())
    k0, fits0 = first[0], first[9]
    assert fits0["capacity"] == k0 and first[10] is not no_update  # new data: panel 1 drawn
    view = View(dyn_label=first[23], dyn_options=first[22])
    typed = live_update(ids.K_INPUT, 3.5, None, None, demo, None, settings, k0, demo["key"], fits0, None, view)
    assert typed[0] == 3.5 and typed[1] is no_update  # the box keeps what the user typed
    assert typed[9]["capacity"] == 3.5 and typed[9] == compute_fits(demo, None, settings, 3.5)
    assert typed[10] is no_update  # panel 1 does not depend on K
    assert all(x is not no_update for x in typed[11:22])  # panel 2, panels 3-5, flag, note, key, table
    assert "K = 3.5" in str(typed[20]) and "K = 3.5" in str(typed[12])
    assert typed[22] is no_update and typed[23] is no_update  # the same fit stays described in panel 7
    assert all(x is not no_update for x in typed[24:33]) and typed[33] is no_update  # no forecast asked for
    with pytest.raises(PreventUpdate):  # the same K again: nothing to send
        live_update(ids.K_INPUT, 3.5, None, None, demo, None, settings, 3.5, demo["key"], typed[9], None, view)


def test_with_k_fitted_a_moved_k_redraws_only_what_shows_k(demo: dict, settings: dict) -> None:
    fitted = {**settings, "k_mode": "fitted", "models": ["logistic"]}
    store = compute_fits(demo, None, fitted, 4.0)
    out = live_update(ids.K_INPUT, 3.5, None, None, demo, None, fitted, 4.0, demo["key"], store, None, View())
    assert out[0] == 3.5 and out[9] is no_update  # no refit: the fits do not hold K
    assert out[13] is not no_update and out[19] is not no_update  # the trajectory's K line and the key
    assert all(x is no_update for x in (*out[14:19], *out[20:-2]))
    # panel 2 still follows a dragged K in the browser; no fit holds K, so none is previewed
    assert [c["model"] for c in out[-2]["candidates"]] == ["logistic"] and out[-2]["fits"] == []


def test_a_reply_cancelled_in_the_browser_is_made_good_by_the_next(demo: dict, settings: dict) -> None:
    """The browser drops a reply still on its way when the next change starts another (Dash keeps only the
    newest call of a callback), so a K moved before the first reply landed is answered as the new data."""
    first = live_update(ids.DATA, None, None, None, demo, None, settings, None, None, None, None, View())
    after = live_update(ids.K_INPUT, 3.5, None, None, demo, None, settings, None, None, None, None, View())
    assert after[:10] == first[:10] and after[10] is not no_update  # the first guess, its fits and panel 1
    dropped_exclusion = {**first[9], "used": [False, *first[9]["used"][1:]]}  # fits of other points on screen
    same_k = live_update(ids.K_SLIDER, None, first[0], None, demo, None, settings, first[0], demo["key"],
                         dropped_exclusion, None, View())
    assert same_k[9] == first[9] and same_k[10] is not no_update  # refitted and redrawn, not skipped


def test_panel_seven_off_screen_waits_until_it_comes_into_view(demo: dict, settings: dict) -> None:
    """The cobweb and sweep are the page's costliest figures: off screen, new fits only mark them stale."""
    first = live_update(ids.DATA, None, None, None, demo, None, settings, None, None, None, None, View())
    views = (View(dyn_label=first[23], dyn_options=first[22], visible=visible) for visible in (True, False))
    on, off = (live_update(ids.K_INPUT, 3.5, None, None, demo, None, settings, first[0], demo["key"], first[9], None,
                           view) for view in views)
    assert on[9] == off[9] and str(on[20]) == str(off[20])  # the same fits and table either way
    assert all(x is not no_update for x in on[24:29]) and on[34] is no_update  # drawn, and not stale before
    assert all(x is no_update for x in off[24:29]) and off[34] is True
    again = live_update(ids.K_INPUT, 3.6, None, None, demo, None, settings, 3.5, demo["key"], off[9], None,
                        View(dyn_label=first[23], dyn_options=first[22], visible=False, stale=True))
    assert again[34] is no_update  # already marked: nothing for the browser to pass on


def test_a_reopened_records_k_is_fitted_in_the_reply_to_its_data(demo: dict, settings: dict) -> None:
    """The data of a reopened record come with its K: the reply fits at that K at once and uses it up,
    even when the data are those already on screen (then the committed K is the only thing that moves)."""
    first = live_update(ids.DATA, None, None, None, demo, None, settings, None, None, None, None, View())
    k0, fits0 = first[0], first[9]
    pending = {"key": demo["key"], "value": 4.3}
    reopened = live_update(ids.DATA, None, None, None, demo, None, settings, k0, demo["key"], fits0, pending, View())
    assert reopened[0] == reopened[1] == reopened[2] == 4.3 and "reopened record" in reopened[7]
    assert reopened[9] == compute_fits(demo, None, settings, 4.3)
    assert reopened[-1] is None  # used once: a later change of K is the user's own
    later = live_update(ids.K_INPUT, 3.9, None, None, demo, None, settings, 4.3, demo["key"], reopened[9], None,
                        View())
    assert later[9]["capacity"] == 3.9 and later[-1] is no_update
    other = live_update(ids.DATA, None, None, None, demo, None, settings, None, None, None,
                        {"key": "another file", "value": 4.3}, View())
    assert other[0] == k0 and other[-1] is None  # a K meant for other data is dropped, not applied


def test_fitted_k_mode_reports_profile_intervals(demo: dict, settings: dict) -> None:
    store = compute_fits(demo, None, {**settings, "models": ["logistic"], "k_mode": "fitted"}, 4.2)
    fit = store["fits"][0]
    assert not fit["parameters"]["K"]["fixed"] and fit["profile_interval"] is not None
    assert store["capacity"] is None


def test_explore_panels_show_the_engine_slope(demo: dict, settings: dict) -> None:
    _, fig2, readout = explore_panels(demo, None, settings, 4.0)
    engine = candidate_fit(series_from_store(demo), Candidate("p·(1 − p/K)", "logistic"), 4.0)
    text = str(readout)
    assert f"r = {engine.slope:.4g}" in text and f"uncentered R² = {engine.r2_uncentered:.4g}" in text
    _, _, other = explore_panels(demo, None, settings, 5.0)
    assert str(other) != text
    assert "ricker" in text  # says why Ricker has no candidate line


def test_panels_and_table_from_the_store(demo: dict, settings: dict) -> None:
    store = compute_fits(demo, None, settings, 4.2)
    traj, rt, rf, op, flag, note, key = draw_panels(store, 4.2, demo, None)
    assert traj["layout"]["shapes"][0]["yanchor"] == 4.2 and "one step ahead" in note
    assert "first observation" in draw_panels(store, 4.2, demo, None, path_from="first")[5]
    # the key lists every chosen form once, in the order the forms were chosen
    assert [li.children[1] for li in key[0].children[2:-1]] == [f"{m} (increments)" for m in settings["models"]]
    table, _ = draw_comparison(store, None)
    text = str(table)
    assert "★ best AICc" in text and "'K = 4.2', className='nowrap'), ' ', Span(children='(held)'" in text


def test_sorting_cycles_and_keeps_missing_values_last() -> None:
    rows = [{"aicc": 3.0}, {"aicc": None}, {"aicc": 1.0}]
    assert [r["aicc"] for r in sort_rows(rows, {"column": "aicc", "descending": True})] == [3.0, 1.0, None]
    assert [r["aicc"] for r in sort_rows(rows, {"column": "aicc", "descending": False})] == [1.0, 3.0, None]


def test_series_picker_switches_between_series_of_one_file() -> None:
    path = os.path.join(os.path.dirname(DEMO_FILE), "reactor_replicates_long.csv")
    if not os.path.exists(path):
        pytest.skip("the replicate demo file is not written yet")
    source = read_source(path)
    first = import_source(source)
    assert first["series_names"] == ["R1", "R2", "R3"] and first["name"] == "R1"
    out = on_import(None, 0, "R2", None, source, first, None, None, None, None, None, trigger=ids.SERIES_PICK)
    assert out[1]["name"] == "R2" and out[1]["key"] != first["key"]
    assert out[0] is no_update  # the file itself is unchanged
    # and so are its series and columns: the menu and the column list on the page are not sent again
    assert out[5] is no_update and out[7] is no_update and out[6] == "R2"


def test_file_refused_by_the_browser_gets_a_message() -> None:
    message = refused_message({"name": "year.csv", "size": 25_000_000, "at": 1}, {"source": "demo.csv"}, 10_000_000)
    flat = str(message.children)
    assert "year.csv" in flat and "25,000,000 bytes" in flat and "10,000,000 bytes" in flat and "demo.csv" in flat
    assert refused_message(None, None, 10_000_000) is no_update
