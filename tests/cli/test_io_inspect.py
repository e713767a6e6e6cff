"""The ``growthcore inspect`` command: text report, JSON report and failure exit status."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

import growthcore.cli as cli


@pytest.fixture()
def sample(tmp_path: Path) -> Path:
    path = tmp_path / "reactor.csv"
    path.write_text("Time (h),Dry weight (g/L)\n0,0.1\n12,0.2\n24,n.a.\n36,0.8\n48,1.6\n", encoding="utf-8")
    return path


def test_text_report(sample: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["inspect", str(sample)]) == 0
    out = capsys.readouterr().out
    assert "reactor.csv" in out
    assert "Dry weight" in out and "4 points used" in out
    assert "row 4, column 'Dry weight (g/L)'" in out


def test_json_report(sample: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["inspect", str(sample), "--json", "--time-unit", "d"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["source"] == "reactor.csv" and data["header_row"] == 1
    assert data["series"][0]["time"] == {"column": "Time (h)", "unit": "d"}
    assert data["series"][0]["points_used"] == 4
    assert data["left_out"][0]["row"] == 4


def test_failure_exit_status(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    bad = tmp_path / "junk.xlsx"
    bad.write_bytes(b"PK\x03\x04 definitely not a workbook")
    assert cli.main(["inspect", str(bad)]) != 0
    err = capsys.readouterr().err.strip()
    assert "junk.xlsx" in err and len(err.splitlines()) == 1


def test_column_options(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "long.csv"
    path.write_text("id,t,N,T\na,0,1,30\na,1,2,30\na,2,4,30\nb,0,2,30\nb,1,3,30\nb,2,5,30\n")
    assert cli.main(["inspect", str(path), "--series", "id", "--value", "N", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [s["name"] for s in data["series"]] == ["a", "b"] and data["layout"] == "long"
