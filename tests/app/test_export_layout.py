"""Figures as the screen and the files show them: iterated maps, the form key, paged tables.

Checks are mathematical identities (the discrete logistic recurrence iterated by hand) and
bookkeeping that must hold exactly (every table row on some page, every page's table inside it).
The demo data are invented (see sample_data/README.md).
"""

from __future__ import annotations

import numpy as np
import pytest

from growthcore.app.callbacks import export as ex
from growthcore.app.callbacks.capacity import update_capacity
from growthcore.app.callbacks.data import import_source
from growthcore.app.callbacks.settings import build_settings
from growthcore.app.server import DEMO_FILE, read_source
from growthcore.app.state import series_from_store
from growthcore.errors import GrowthcoreInputError
from growthcore.figures.common import fit_styles, form_key
from growthcore.fit import fit
from growthcore.report.panels import comparison_columns, key_constant_columns, summary_sheets, table_pages

SIX = ["geometric", "logistic", "beverton-holt", "ricker", "gompertz", "logistic-curve"]


def _stores(forms: list[str], method: str = "both", error: str = "log") -> tuple:
    data = import_source(read_source(DEMO_FILE))
    settings = build_settings(forms, [], "p*(1 - p/K)", method, error, "held")[0]
    k = update_capacity(None, None, None, None, data, settings, None, None)[0]
    return data, {"key": data["key"], "excluded": {}, "history": []}, settings, k


def test_map_iterated_from_the_last_observation_is_the_logistic_recurrence() -> None:
    data, _, _, k = _stores(["logistic"])
    series = series_from_store(data)
    result = fit(series, "logistic", method="increments", capacity=k)
    assert result.success
    t, p = result.iterated_path("last", float(series.t[-1]) + 5 * 12.0)
    r = result.values["r"]
    # p_{n+1} = p_n + r·p_n·(1 − p_n/K), started at the last observation (the form's definition)
    want = [float(series.p[-1])]
    for _ in range(5):
        want.append(want[-1] + r * want[-1] * (1 - want[-1] / k))
    assert t.tolist() == pytest.approx([float(series.t[-1]) + 12.0 * i for i in range(6)])
    assert p.tolist() == pytest.approx(want, rel=1e-12)
    first_t, first_p = result.iterated_path("first", float(series.t[-1]))
    path_t, path_p = result.path(float(series.t[-1]))
    assert np.array_equal(first_t, path_t) and np.allclose(first_p, path_p)
    with pytest.raises(GrowthcoreInputError, match="'first' or 'last'"):
        result.iterated_path("middle", 10.0)
    curve = fit(series, "logistic-curve", method="trajectory", capacity=k)
    with pytest.raises(GrowthcoreInputError, match="closed-form curve"):
        curve.iterated_path("last", 10.0)


def test_a_form_keeps_its_colour_when_another_form_is_not_fitted() -> None:
    fits = [{"model": "gompertz", "method": "increments", "label": "gompertz (increments)", "status": "converged"}]
    alone = fit_styles(fits)[0]
    among = fit_styles(fits, ["logistic", "gompertz"])[0]
    assert alone["colour"] != among["colour"]
    assert form_key(fits, ["logistic", "gompertz"])[0]["colour"] == among["colour"]


@pytest.mark.parametrize("size", ["screen", "slide", "print"])
def test_summary_sheet_pages_hold_every_table_row(size: str) -> None:
    from growthcore.report.images import SHEET_SIZES

    record = ex.session_record(*_stores(SIX))
    sheet = SHEET_SIZES[size]
    pages = summary_sheets(record, width=sheet.width, height=sheet.height)
    tables = [t for page in pages for t in page["data"] if t.get("type") == "table"]
    drawn = [cell for t in tables for cell in t["cells"]["values"][0]]
    wanted = comparison_columns(record)[1][0] + key_constant_columns(record)[1][0]
    assert sorted(drawn) == sorted(wanted)
    for t in tables:
        y0, y1 = t["domain"]["y"]
        assert 0.0 <= y0 < y1 <= 1.0
    assert len(pages) >= 2  # twelve fits do not fit one page beside the plots
    assert all("page" in p["layout"]["title"]["text"] for p in pages)


def test_long_tables_continue_on_further_images_with_their_header() -> None:
    header, cols = ["form", "value"], [[f"form {i}" for i in range(40)], [str(i) for i in range(40)]]
    pages = table_pages("parameters", header, cols, [2, 1], "Constants", (650, 450))
    assert list(pages)[:2] == ["parameters", "parameters-2"]
    rows = [v for fig in pages.values() for v in fig["data"][0]["cells"]["values"][0]]
    assert rows == cols[0]
    for fig in pages.values():
        n = len(fig["data"][0]["cells"]["values"][0])
        assert 50 + 26 + 22 * n + 20 <= 450  # margins, header and 22-px rows within the image
        assert len(fig["data"][0]["header"]["values"]) == 2  # every page has the header


def test_two_error_scales_get_an_axis_each() -> None:
    from growthcore.app.callbacks.explore import labels_of
    from growthcore.app.callbacks.fits import compute_fits
    from growthcore.figures.residuals import residual_time_figure

    data, exclusions, settings, k = _stores(["logistic"], "both", "log")
    fits = compute_fits(data, exclusions, settings, k)["fits"]
    fig = residual_time_figure(fits, labels_of(data))
    layout = fig["layout"]
    assert layout["yaxis"]["title"]["text"] == "p − p̂ [g/L]" and layout["yaxis2"]["title"]["text"] == "ln p − ln p̂"
    on = {t["name"]: t.get("yaxis", "y") for t in fig["data"] if t.get("meta") == "points"}
    assert on == {"logistic (increments)": "y", "logistic (trajectory, log error)": "y2"}
    # the domains do not overlap: no axis mixes the two units
    assert layout["yaxis2"]["domain"][1] < layout["yaxis"]["domain"][0]


def test_a_refused_record_crosses_a_process_boundary_whole() -> None:
    """Records are read in worker processes; the refusal must arrive with its file name and problems."""
    import pickle

    from growthcore.reopen import RecordError

    err = pickle.loads(pickle.dumps(RecordError("edited.json", ["integrity hash mismatch", "two"])))
    assert err.name == "edited.json" and err.problems == ("integrity hash mismatch", "two")
    assert str(err).startswith("edited.json: integrity hash mismatch")
