"""Reading records back: round trips, refusal of damaged records, recomputation, the kept fixture."""

from __future__ import annotations

import copy
import json
import math
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import growthcore.cli as cli
from growthcore.record import FORMAT_VERSION, build_record, seal
from growthcore.reopen import RecordError, differences, fits_from_record, load_record, parse_record, recompute, reopen
from growthcore.schemas import record_errors
from tests.record_cases import FIXTURES, SAMPLES, census_record, record_cases

FIXTURE = FIXTURES / "fit-record-v1.json"
VOLATILE = ("created", "software", "integrity")


def _core(record: dict[str, Any]) -> dict[str, Any]:
    return {k: v for k, v in record.items() if k not in VOLATILE}


@pytest.mark.parametrize("name", sorted(record_cases()))
def test_round_trip_through_engine_objects(name: str) -> None:
    """record -> series, requests and fit results (no fitting) -> record: equal apart from time and software."""
    record = record_cases()[name]
    back = reopen(record)
    fits = fits_from_record(record)
    again = build_record(back.series, fits, source=back.source, settings=back.settings, requests=list(back.requests))
    again = json.loads(json.dumps(again))
    original = _core(record)
    original.pop("comparison")
    assert _core(again) == original
    assert record_errors(again, FORMAT_VERSION) == []


def test_exclusions_and_missing_values_survive() -> None:
    record = census_record()
    series = reopen(record).series
    assert series.excluded == {4: "count disturbed by a storm (field note)"}
    tiny = reopen(record_cases()["tiny-with-failure"]).series
    assert math.isnan(tiny.p[2]) and not tiny.used[2] and tiny.reason(2) == "value is not a finite number"
    assert tiny.time_unit == "d" and tiny.value_column == "count"


@pytest.mark.parametrize("name", ["census-both-methods", "algae-log-error-fixed-K", "census-custom-terms"])
def test_refit_reproduces_every_number(name: str) -> None:
    """Fitting again from the recorded requests gives the recorded numbers (same machine: exactly)."""
    record = record_cases()[name]
    result = recompute(record)
    assert result.reproduced, [str(d) for d in result.differences[:5]]
    assert differences(record["fits"], result.record["fits"], rtol=0.0) == []


def test_recompute_names_a_changed_number() -> None:
    record = census_record()
    record["fits"][1]["parameters"]["K"]["value"] *= 1.01
    seal(record)
    result = recompute(record)
    assert not result.reproduced
    where = [d.where for d in result.differences]
    assert "fits[1] logistic (trajectory, additive).parameters.K.value" in where


def _refused(text: str | bytes, *words: str) -> RecordError:
    with pytest.raises(RecordError) as info:
        parse_record(text, name="r.json")
    message = str(info.value)
    assert message.startswith("r.json: ")
    for w in words:
        assert w in message, message
    return info.value


def test_damaged_records_are_refused_with_a_reason() -> None:
    good = json.dumps(census_record(), indent=1)
    _refused("", "empty")
    _refused(good[: len(good) // 2], "cut short")
    _refused("{'format': 1}", "not valid JSON")
    _refused(b"\xff\xfe{}", "not UTF-8")
    _refused("[1, 2]", "not an object")
    _refused(json.dumps({"format": "something else"}), "not a growthcore fit record")
    _refused(good.replace('"Birds counted"', "NaN", 1), "NaN is not a JSON number")


def test_unknown_version_is_refused() -> None:
    record = census_record()
    record["format_version"] = 3
    seal(record)
    _refused(json.dumps(record), "format version 3", "reads version 1, 2", "newer growthcore")
    record["format_version"] = "1"
    _refused(json.dumps(seal(record)), "format version '1'")


def test_tampered_record_is_refused() -> None:
    record = census_record()
    record["fits"][0]["parameters"]["r"]["value"] = 2.0
    _refused(json.dumps(record), "integrity hash mismatch")
    del record["integrity"]
    _refused(json.dumps(record), "no integrity hash")


def test_sealed_but_invalid_record_lists_its_problems() -> None:
    record = census_record()
    record["fits"][0]["status"] = "maybe"
    record["data"]["points"][0]["t"] = "first"
    error = _refused(json.dumps(seal(record)), "and 1 more problem")
    assert any("fits[0].status" in p for p in error.problems)
    assert any("points[0].t" in p for p in error.problems)


def test_points_out_of_order_are_refused_on_reopening() -> None:
    record = census_record()
    record["data"]["points"][1]["t"] = 1990.0
    with pytest.raises(RecordError, match="must be non-decreasing"):
        reopen(parse_record(json.dumps(seal(record))), name="r.json")


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_random_damage_never_crashes(data: st.DataObject) -> None:
    """Cut or overwrite bytes anywhere: the reader either accepts (hash intact) or refuses, never crashes."""
    raw = bytearray(json.dumps(record_cases()["tiny-with-failure"]).encode())
    pos = data.draw(st.integers(0, len(raw) - 1))
    if data.draw(st.booleans()):
        raw = raw[:pos]
    else:
        raw[pos] = data.draw(st.integers(0, 255))
    try:
        record = parse_record(bytes(raw))
    except RecordError:
        return
    reopen(record)


def test_load_record_names_a_missing_file(tmp_path: Path) -> None:
    with pytest.raises(RecordError, match="cannot be read"):
        load_record(tmp_path / "absent.json")


def test_fixture_of_version_1_reads_back() -> None:
    """The record kept from growthcore 0.1.0 must stay readable by every later version."""
    record = load_record(FIXTURE)
    back = reopen(record)
    assert back.series.name == "Birds counted" and len(back.series) == 30
    assert back.import_report is not None and back.import_report.sha256 == record["data"]["sha256"]
    fits = fits_from_record(record)
    assert [f.model for f in fits] == ["logistic", "logistic", "ricker", "ricker", "logistic-curve"]
    trajectory = fits[1]
    assert trajectory.success and trajectory.values["K"] == record["fits"][1]["parameters"]["K"]["value"]
    assert record["settings"]["bootstrap"] == 20 and record["settings"]["seed"] is not None
    assert all("dynamics" in f for f in record["fits"])


def test_fit_from_record_command(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A record written with bootstrap and forecast options is repeated exactly, later members included."""
    first, again = tmp_path / "first.json", tmp_path / "again.json"
    assert cli.main(["fit", str(SAMPLES / "island_census.csv"), "--model", "logistic,logistic-curve",
                     "--bootstrap", "15", "--forecast", "2", "--out", str(first)]) == 0
    capsys.readouterr()
    assert cli.main(["fit", "--from-record", str(first), "--out", str(again)]) == 0
    text = capsys.readouterr().out
    assert "2 fit(s) recomputed; every number agrees" in text and "not recomputed" not in text
    stored, remade = load_record(first), load_record(again)
    assert differences(stored["fits"], remade["fits"], rtol=0.0) == []
    assert remade["fits"][0]["bootstrap"]["seed"] == stored["settings"]["seed"]


def test_fit_from_record_on_the_fixture(capsys: pytest.CaptureFixture[str]) -> None:
    """Later versions may fit differently; they must still repeat the fixture's fits and say what moved."""
    status = cli.main(["fit", "--from-record", str(FIXTURE)])
    out = capsys.readouterr().out
    assert "5 fit(s) recomputed" in out
    assert status == (0 if "every number agrees" in out else 1)


def test_fit_from_record_reports_tampering(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    record = json.loads(FIXTURE.read_text(encoding="utf-8"))
    record["data"]["points"][3]["p"] = 999.0
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(record), encoding="utf-8")
    assert cli.main(["fit", "--from-record", str(bad)]) == 1
    assert "integrity hash mismatch" in capsys.readouterr().err


def test_fit_from_record_reports_a_difference(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    record = copy.deepcopy(census_record())
    record["fits"][0]["metrics"]["sse"] *= 1.001
    path = tmp_path / "edited.json"
    path.write_text(json.dumps(seal(record)), encoding="utf-8")
    assert cli.main(["fit", "--from-record", str(path)]) == 1
    out = capsys.readouterr().out
    assert "1 number(s) differ" in out and "metrics.sse" in out


def test_fit_needs_a_file_or_a_record(capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["fit"]) == 1
    assert "--from-record" in capsys.readouterr().err
