"""CSV written by the project cannot smuggle a formula into a spreadsheet program.

The trigger characters (= + - @, tab, carriage return) are those listed in the OWASP guidance
on CSV injection (common practice); the apostrophe prefix is the usual neutraliser.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pytest

from growthcore.io import csv_text, load_file, safe_csv_cell, write_csv


@pytest.mark.parametrize(
    "raw, expected",
    [
        ("=1+2", "'=1+2"),
        ("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"),
        ("-2+3", "'-2+3"),
        ("@SUM(A1:A2)", "'@SUM(A1:A2)"),
        ("\t=1", "'\t=1"),
        ("\r=1", "'\r=1"),
        ("  =HYPERLINK(\"x\")", "'  =HYPERLINK(\"x\")"),
        ("Dry weight (g/L)", "Dry weight (g/L)"),
        ("well A1", "well A1"),
        ("", ""),
    ],
)
def test_text_cells(raw: str, expected: str) -> None:
    assert safe_csv_cell(raw) == expected


@pytest.mark.parametrize(
    "raw, expected",
    [(-1.5, "-1.5"), (3, "3"), (0.1, "0.1"), (-7, "-7"), ("-1.5", "-1.5"), ("+2e-3", "+2e-3"),
     (np.float64(-0.25), "-0.25"), (np.int64(-4), "-4"), (float("nan"), ""), (None, ""), (True, "true")],
)
def test_numbers_stay_numbers(raw: object, expected: str) -> None:
    assert safe_csv_cell(raw) == expected


def test_float_text_round_trips() -> None:
    x = 0.1 + 0.2  # repr keeps all 17 significant digits (Python's shortest round-trip repr)
    assert float(safe_csv_cell(x)) == x


def test_write_csv_file_and_buffer(tmp_path: Path) -> None:
    rows = [[0, 1.5, "=evil()"], [1, -2.0, "ok"]]
    path = tmp_path / "out.csv"
    write_csv(path, ["t", "p", "note"], rows)
    buf = io.StringIO()
    write_csv(buf, ["t", "p", "note"], rows)
    assert path.read_text(encoding="utf-8") == buf.getvalue() == csv_text(["t", "p", "note"], rows)
    parsed = list(csv.reader(io.StringIO(buf.getvalue())))
    assert parsed == [["t", "p", "note"], ["0", "1.5", "'=evil()"], ["1", "-2.0", "ok"]]


def test_written_csv_reads_back(tmp_path: Path) -> None:
    path = tmp_path / "back.csv"
    write_csv(path, ["Time (h)", "Biomass (g/L)"], [[0, 0.5], [1, 1.0], [2, -0.25]])
    r = load_file(path)
    assert list(r.series[0].p) == [0.5, 1.0, -0.25]
