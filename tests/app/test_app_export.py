"""Export and reopening from the app, with the callbacks called directly (no browser).

The record the app exports is held to the one ``growthcore fit`` writes for the same data and
settings (the command line is the reference for "the same content"), to the JSON Schema through
the reference validator (the ``jsonschema`` package), and to itself after a round trip through
the app's stores. The demo file is invented (see sample_data/README.md).
"""

from __future__ import annotations

import base64
import csv
import datetime as dt
import io
import json
import os
import shutil
from typing import Any

import jsonschema
import pytest

from growthcore.app.callbacks import export as ex
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.fits import compute_fits
from growthcore.app.callbacks.settings import build_settings
from growthcore.app.server import DEMO_FILE, read_source
from growthcore.app.state import toggle_exclusion
from growthcore.cli import main
from growthcore.record import seal
from growthcore.report.images import PANEL_SIZES, SHEET_SIZES
from growthcore.schemas import record_schema

FIXTURE = os.path.join(os.path.dirname(os.path.dirname(os.path.abspath(__file__))), "fixtures", "fit-record-v1.json")
#: Members that differ between two writes of the same analysis by design.
WRITE_ONLY = ("created", "software", "integrity")
ALL_FILES = ["record", "images", "table", "report"]
CREATED = dt.datetime(2025, 3, 1, 12, 0, tzinfo=dt.timezone.utc)


def _session(forms: list[str], *, constant: bool = False, terms: str = "p*(1 - p/K)", method: str = "increments",
             error: str = "additive", k_mode: str = "held", k: float | None = None,
             excluded: tuple[int, ...] = ()) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any], float]:
    """The stores of a session on the demo data, made by the app's own callback functions."""
    data = import_source(read_source(DEMO_FILE))
    settings, _notes, _live = build_settings(forms, ["c"] if constant else [], terms, method, error, k_mode)
    estimate = update_capacity(None, None, None, None, data, settings, None, None)[0]
    exclusions: dict[str, Any] = {"key": data["key"], "excluded": {}, "history": []}
    for i in excluded:
        exclusions = toggle_exclusion(exclusions, data["key"], i)
    return data, exclusions, settings, (estimate if k is None else k)


def _upload(text: str, name: str = "record.json") -> tuple[Any, ...]:
    return ex.on_record_upload("data:application/json;base64," + base64.b64encode(text.encode()).decode(), name)


def _reopened(record: dict[str, Any]) -> tuple[dict[str, Any], dict[str, Any], dict[str, Any], float | None]:
    """The stores after uploading ``record``, as the settings and capacity callbacks then make them."""
    out = _upload(ex.record_text(record))
    assert "Reopened" in str(out[-1])
    data, exclusions = out[1], out[2]
    forms, constant, terms, method, error, k_mode = out[7:13]
    settings = build_settings(forms, constant, terms, method, error, k_mode)[0]
    capacity = update_capacity(None, None, None, None, data, settings, None, None, pending=out[13])[0]
    return data, exclusions, settings, capacity


def _body(record: dict[str, Any]) -> str:
    return json.dumps({k: v for k, v in record.items() if k not in WRITE_ONLY}, sort_keys=True)


def _export(*stores: Any, forms: list[str], what: list[str] = ALL_FILES, size: str = "screen") -> tuple[Any, ...]:
    return ex.on_export(1, *stores, forms, what, size, created=CREATED)


# ---------------------------------------------------------------------------------------------
# The record


def test_record_is_what_the_command_line_writes(tmp_path: Any, monkeypatch: pytest.MonkeyPatch) -> None:
    """Same file, forms, method and fixed K: every member but the write stamps is identical."""
    name = os.path.basename(DEMO_FILE)
    shutil.copy(DEMO_FILE, tmp_path / name)
    monkeypatch.chdir(tmp_path)
    assert main(["fit", name, "--model", "logistic,gompertz+c", "--method", "trajectory", "--capacity", "4.105",
                 "--no-profile", "--out", "cli.json"]) == 0
    cli = json.loads((tmp_path / "cli.json").read_text())
    stores = _session(["logistic", "gompertz"], constant=True, terms="", method="trajectory", k=4.105)
    record = ex.session_record(*stores, forms=["logistic", "gompertz+c"])
    # the app adds the K of its exploration panels; the command line has none
    assert record["settings"].pop("capacity_estimate") == 4.105
    assert _body(record) == _body(cli)


def test_exported_record_validates_and_reads_back() -> None:
    stores = _session(["logistic", "ricker"], excluded=(5,))
    out = _export(*stores, forms=["logistic", "ricker"])
    text = out[0]["content"]
    assert out[0]["filename"] == "algae_photobioreactor-Dry-weight-logistic_ricker-fit-record.json"
    record = json.loads(text)
    # the reference implementation of JSON Schema, not our own validator
    errors = list(jsonschema.Draft202012Validator(record_schema(record["format_version"])).iter_errors(record))
    assert errors == []
    from growthcore.reopen import parse_record

    assert parse_record(text)["integrity"] == record["integrity"]
    assert [f["model"] for f in record["fits"]] == ["logistic", "ricker"]
    point = record["data"]["points"][5]
    assert (point["used"], point["reason"]) == (False, "excluded by the user")
    assert record["data"]["sha256"] == stores[0]["sha256"] and record["data"]["import_report"]["rows_read"] > 0
    fit = record["fits"][0]
    assert {"value", "se", "ci95"} <= set(fit["parameters"]["r"]) and fit["metrics"]["aicc"] is not None
    assert "dynamics" in fit and "derived" in fit and fit["diagnostics"] is not None


def test_only_the_chosen_forms_are_exported() -> None:
    stores = _session(["logistic", "gompertz", "ricker"])
    record = json.loads(_export(*stores, forms=["gompertz"])[0]["content"])
    assert [f["model"] for f in record["fits"]] == ["gompertz"]
    assert record["settings"]["models"] == ["gompertz"]
    assert [r["model"] for r in record["comparison"]["rows"]] == ["gompertz"]


@pytest.mark.parametrize("case", [
    dict(forms=["logistic", "gompertz"], constant=True, k=4.3, excluded=(3, 17)),
    dict(forms=["logistic", "custom", "logistic-curve"], method="both", error="log", k_mode="fitted", excluded=(0,)),
], ids=["increments-held-K", "both-methods-fitted-K-custom"])
def test_round_trip_record_app_state_record(case: dict[str, Any]) -> None:
    """record -> app stores (upload) -> record: equal apart from the write stamps."""
    stores = _session(**case)
    first = ex.session_record(*stores, created=CREATED)
    again = _reopened(first)
    assert again[0]["t"] == stores[0]["t"] and again[0]["p"] == stores[0]["p"]
    assert again[1]["excluded"] == stores[1]["excluded"]
    assert again[2] == stores[2]
    assert again[3] == stores[3]
    second = ex.session_record(*again)
    assert _body(second) == _body(first)
    # and the panels' numbers (the fits store) are those of the record
    shown = compute_fits(*again)
    assert [(f["model"], f["method"], f["error"]) for f in shown["fits"]] == \
        [(f["model"], f["method"], f["error"]) for f in first["fits"]]
    converged = [(p, s) for p, s in zip(shown["fits"], first["fits"], strict=True) if s["status"] == "converged"]
    assert len(converged) >= 3
    for plain, stored in converged:
        assert plain["parameters"] == stored["parameters"]
        assert plain["metrics"] == stored["metrics"]


def test_a_command_line_record_opens_in_the_app() -> None:
    """The kept v1 fixture (both methods, no fixed K) opens with "both" and K fitted."""
    with open(FIXTURE, encoding="utf-8") as fh:
        text = fh.read()
    out = _upload(text, "fit-record-v1.json")
    assert "Reopened fit-record-v1.json" in str(out[-1])
    record = json.loads(text)
    forms, constant, _terms, method, _error, k_mode = out[7:13]
    assert forms == ["logistic", "ricker", "logistic-curve"] and constant == []
    assert (method, k_mode) == ("both", "fitted")
    assert len(out[1]["t"]) == len(record["data"]["points"])
    # K for the exploration panels: the first fitted K of the record
    assert out[13]["value"] == record["fits"][0]["parameters"]["K"]["value"]


# ---------------------------------------------------------------------------------------------
# Refusals


def _refused(out: tuple[Any, ...]) -> str:
    assert all(o is ex.no_update for o in out[:-1]), "a refused record must leave the session as it was"
    assert "record-refused" in out[-1].className
    return str(out[-1])


@pytest.fixture(scope="module")
def record_text() -> str:
    return ex.record_text(ex.session_record(*_session(["logistic"]), created=CREATED))


def test_tampered_record_is_refused(record_text: str) -> None:
    record = json.loads(record_text)
    record["fits"][0]["parameters"]["r"]["value"] *= 1.01
    assert "integrity hash mismatch" in _refused(_upload(json.dumps(record), "edited.json"))


def test_truncated_record_is_refused(record_text: str) -> None:
    message = _refused(_upload(record_text[: len(record_text) // 2], "cut.json"))
    assert "cut.json" in message and "cut short" in message


def test_unknown_version_is_refused(record_text: str) -> None:
    record = json.loads(record_text)
    record["format_version"] = 99
    assert "newer growthcore" in _refused(_upload(json.dumps(seal(record))))


def test_record_that_breaks_the_schema_is_refused(record_text: str) -> None:
    record = json.loads(record_text)
    record["fits"][0]["status"] = 7
    message = _refused(_upload(json.dumps(seal(record)), "bad.json"))
    assert "fits[0]" in message or "status" in message


def test_not_a_record_is_refused() -> None:
    with open(DEMO_FILE, encoding="utf-8") as fh:
        assert "not valid JSON" in _refused(_upload(fh.read(), "data.csv"))
    assert "not a growthcore fit record" in _refused(_upload('{"a": 1}'))
    assert "damaged" in _refused(ex.on_record_upload("data:application/json;base64,@@@", "x.json"))


# ---------------------------------------------------------------------------------------------
# The other files


def test_residual_csv_has_a_row_per_fitted_point_and_guards_formulas() -> None:
    data, exclusions, settings, k = _session(["logistic", "gompertz"], excluded=(2,))
    data = dict(data, name="=HYPERLINK(\"x\")")  # a series name that a spreadsheet would run
    out = _export(data, exclusions, settings, k, forms=["logistic", "gompertz"], what=["table"])
    assert out[0] is ex.no_update and out[3] is ex.no_update
    rows = list(csv.reader(io.StringIO(out[1]["content"])))
    assert rows[0][:6] == ["series", "model", "method", "error model", "prediction", "time (h)"]
    record = ex.session_record(data, exclusions, settings, k, forms=["logistic", "gompertz"])
    assert len(rows) - 1 == sum(len(f["residuals"]) for f in record["fits"])
    assert all(r[0].startswith("'=") for r in rows[1:])
    first = record["fits"][0]["residuals"][0]
    assert float(rows[1][5]) == first["t"] and float(rows[1][8]) == pytest.approx(first["residual"], rel=1e-15)
    assert out[1]["filename"].endswith("-residuals.csv") and "/" not in out[1]["filename"]


def test_html_report_holds_the_figures_and_the_record() -> None:
    stores = _session(["logistic"])
    out = _export(*stores, forms=["logistic"], what=["report"])
    page = out[2]["content"]
    assert page.startswith("<!DOCTYPE html>") and "Plotly.newPlot" in page
    for panel in ("data", "residuals", "comparison", "parameters"):
        assert f'id="panel-{panel}"' in page
    assert 'id="fit-record"' in page


@pytest.mark.parametrize("size", list(PANEL_SIZES))
def test_image_jobs_have_the_preset_sizes(size: str) -> None:
    stores = _session(["logistic", "ricker"])
    out = _export(*stores, forms=["logistic", "ricker"], what=["images"], size=size)
    jobs = out[3]
    panels = [j for j in jobs["images"] if "summary-sheet" not in j["filename"]]
    sheet = [j for j in jobs["images"] if "summary-sheet" in j["filename"]]
    assert len(sheet) >= 1 and len(panels) >= 8
    for live in ("change-against-state.png", "change-against-candidate-terms.png"):
        assert sum(j["filename"].endswith(live) for j in panels) == 1, live
    want = PANEL_SIZES[size]
    for job in panels:
        assert job["pixels"] == [round(want.width * want.scale), round(want.height * want.scale)]
        assert job["dpi"] == want.dpi
        assert job["figure"]["data"], job["filename"]  # nothing blank is announced
    assert sheet[0]["pixels"] == list(SHEET_SIZES[size].pixels)
    # the message announces exactly the files the browser is given to draw
    assert f"{len(jobs['images'])} PNG images ({size}) follow" in str(out[4])
    json.dumps(jobs)  # the store must be plain JSON


def test_exports_of_two_files_never_share_a_name() -> None:
    stores = _session(["logistic"])
    record = ex.session_record(*stores, forms=["logistic"])
    other = json.loads(json.dumps(record))
    other["data"]["source"] = "census_counts.xlsx"
    assert ex.export_stem(record, ["logistic"]) == "algae_photobioreactor-Dry-weight-logistic"
    assert ex.export_stem(other, ["logistic"]) == "census_counts-Dry-weight-logistic"
    many = ["logistic", "gompertz", "ricker", "beverton-holt", "theta-logistic", "geometric"]
    assert ex.export_stem(record, many) == "algae_photobioreactor-Dry-weight-logistic_gompertz_and-4-more"


def test_a_panel_with_nothing_to_show_is_neither_drawn_nor_announced() -> None:
    """Only closed-form curves: panel 2 has no candidate term, so no PNG of it is made or counted."""
    stores = _session(["logistic-curve"], method="trajectory")
    out = _export(*stores, forms=["logistic-curve"], what=["images"])
    names = [j["filename"] for j in out[3]["images"]]
    assert not any(n.endswith("change-against-candidate-terms.png") for n in names)
    assert any(n.endswith("change-against-state.png") for n in names)
    assert f"{len(names)} PNG images (screen) follow" in str(out[4])


def test_exports_follow_the_screen_view() -> None:
    """The log scale and the iterated path chosen on screen are kept in the exported figures."""
    stores = _session(["logistic", "gompertz"])
    out = ex.on_export(1, *stores, ["logistic", "gompertz"], ["images", "report"], "screen", None, None, "log",
                       "last", "state", created=CREATED)
    figs = {j["filename"].split("-logistic_gompertz-")[1]: j["figure"] for j in out[3]["images"]}
    assert figs["data.png"]["layout"]["yaxis"]["type"] == "log"
    assert figs["observed-predicted.png"]["layout"]["xaxis"]["type"] == "log"
    assert figs["change-against-state.png"]["layout"]["xaxis"]["type"] == "log"
    assert any("iterated from the last" in t.get("hovertemplate", "") for t in figs["data.png"]["data"])
    assert '"type": "log"' in out[2]["content"] or '"type":"log"' in out[2]["content"]


def test_print_sheet_is_an_a4_page_at_300_dpi() -> None:
    """ISO 216: A4 is 210 × 297 mm; at 300 dpi that is 2480.3 × 3507.9 px (± 1 px of rounding)."""
    w, h = SHEET_SIZES["print"].pixels
    assert abs(w - 210 / 25.4 * 300) < 1.5 and abs(h - 297 / 25.4 * 300) < 1.5
    assert SHEET_SIZES["print"].dpi == 300


def test_export_without_choices_says_what_is_missing() -> None:
    stores = _session(["logistic"])
    assert "at least one fitted form" in str(_export(*stores, forms=[])[4])
    assert "at least one kind of file" in str(_export(*stores, forms=["logistic"], what=[])[4])
    assert "load a data file" in str(ex.on_export(1, None, None, None, None, ["logistic"], ALL_FILES, "screen")[4])
    assert ex.on_export(0, *stores, ["logistic"], ALL_FILES, "screen") == (ex.no_update,) * 5


def test_file_stem_is_safe() -> None:
    assert ex.file_stem("Tank A / run 2") == "Tank-A-run-2"
    assert ex.file_stem("../..") == "series"


def test_reopening_says_which_extra_forms_the_controls_add() -> None:
    """The controls add the constant term to every difference form; a record of only one says so."""
    stores = _session(["logistic", "gompertz"], constant=True)
    record = ex.session_record(*stores, forms=["logistic", "logistic+c", "gompertz"])
    out = _upload(ex.record_text(record))
    assert out[8] == ["c"]
    assert "also fit gompertz+c, which the record does not hold" in str(out[-1])
    plain = ex.session_record(*stores, forms=["logistic", "gompertz"])
    out = _upload(ex.record_text(plain))
    assert out[8] == [] and "also fit" not in str(out[-1])
