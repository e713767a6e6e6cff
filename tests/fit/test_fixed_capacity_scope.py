"""One code path decides which forms hold a fixed K, for the command line and the app alike."""

from __future__ import annotations

import json

import numpy as np
import pytest

from growthcore.app.callbacks.fits import session_fits
from growthcore.cli import main
from growthcore.fit import fit
from growthcore.fit.forms import fit_forms
from tests.open_data import as_csv, uspop


def test_cli_fits_a_form_without_k_beside_a_fixed_k_with_a_note(tmp_path, capsys) -> None:
    # carData::USPop through the CLI: logistic holds K = 440, geometric (no K) is fitted all the same
    path = as_csv(uspop(), tmp_path / "uspop.csv")
    out = tmp_path / "record.json"
    code = main(["fit", path, "--model", "logistic,geometric", "--capacity", "440", "--method", "increments",
                 "--no-profile", "--out", str(out)])
    assert code == 0, capsys.readouterr().err
    record = json.loads(out.read_text(encoding="utf-8"))
    by_model = {f["model"]: f for f in record["fits"]}
    assert by_model["logistic"]["parameters"]["K"] == {**by_model["logistic"]["parameters"]["K"], "value": 440.0,
                                                       "fixed": True}
    assert by_model["geometric"]["status"] == "converged"
    assert any("no carrying capacity K" in n for n in by_model["geometric"]["notes"])
    # the geometric fit is the same one the engine gives without any K (scipy-free identity: same call)
    direct = fit(uspop(), "geometric", method="increments", profile=False)
    assert by_model["geometric"]["parameters"]["r"]["value"] == pytest.approx(direct.values["r"], rel=1e-12)


def test_app_and_cli_share_the_rule() -> None:
    s = uspop()
    settings = {"models": ["logistic", "geometric"], "method": "increments", "error": "additive",
                "k_mode": "held", "terms": []}
    data = {"key": "k", "t": list(s.t), "p": list(s.p), "name": s.name}
    _, app_fits, notes = session_fits(data, None, settings, 440.0)
    engine = fit_forms(s, ["logistic", "geometric"], method="increments", capacity=440.0)
    assert not notes
    assert [f.model for f in app_fits] == [f.model for f in engine]
    for a, b in zip(app_fits, engine, strict=True):
        assert a.notes == b.notes
        assert np.allclose(list(a.values.values()), list(b.values.values()), rtol=1e-12)
