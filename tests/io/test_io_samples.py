"""The invented demo files: they read cleanly, and the seeded script makes them byte for byte."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest

from growthcore.io import load_file

SAMPLES = Path(__file__).resolve().parents[2] / "sample_data"
FILES = [
    "algae_photobioreactor.csv",
    "island_census.csv",
    "plate_reader_wide.csv",
    "plate_reader_wide.xlsx",
    "reactor_replicates_long.csv",
]


def test_script_reproduces_the_files(tmp_path: Path) -> None:
    pytest.importorskip("pandas")
    pytest.importorskip("openpyxl")
    spec = importlib.util.spec_from_file_location("make_samples", SAMPLES / "make_samples.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    module.main(str(tmp_path))
    for name in FILES:
        assert (tmp_path / name).read_bytes() == (SAMPLES / name).read_bytes(), name


@pytest.mark.parametrize("name", FILES)
def test_sample_reads_cleanly(name: str) -> None:
    if name.endswith(".xlsx"):
        pytest.importorskip("openpyxl")
    r = load_file(SAMPLES / name)
    assert not r.report.left_out
    assert all(np.all(s.p > 0) for s in r.series)


def test_default_demo() -> None:
    r = load_file(SAMPLES / "algae_photobioreactor.csv")
    (s,) = r.series
    assert len(s) == 40 and s.step().regular and s.step().h == 12.0
    assert (s.name, s.time_unit, s.value_unit) == ("Dry weight", "h", "g/L")


def test_plate_csv_and_xlsx_agree() -> None:
    pytest.importorskip("openpyxl")
    a = load_file(SAMPLES / "plate_reader_wide.csv")
    b = load_file(SAMPLES / "plate_reader_wide.xlsx")
    assert [s.name for s in a.series] == [f"A{i}" for i in range(1, 13)] == [s.name for s in b.series]
    for sa, sb in zip(a.series, b.series, strict=True):
        # the workbook stores durations as fractions of a day: equal to within float rounding
        np.testing.assert_allclose(sa.t, sb.t, rtol=0, atol=1e-9)
        np.testing.assert_array_equal(sa.p, sb.p)
    assert a.series[0].t[-1] == 26.0 and a.series[0].step().h == 0.25


def test_replicates_stay_regular_across_the_clock_change() -> None:
    # Stamps every 6 h of real time; the wall clock jumps an hour on 2024-03-31, the offsets
    # (+01:00 -> +02:00) make the elapsed time regular again.
    r = load_file(SAMPLES / "reactor_replicates_long.csv")
    assert [s.name for s in r.series] == ["R1", "R2", "R3"]
    for s in r.series:
        np.testing.assert_array_equal(s.t, np.arange(28) * 6.0)


def test_census_years() -> None:
    r = load_file(SAMPLES / "island_census.csv")
    (s,) = r.series
    assert s.t[0] == 1994 and s.t[-1] == 2023 and s.time_unit == "yr"
