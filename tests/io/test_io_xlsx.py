"""Workbooks: cached formula results, leading and merged rows, sheets, and hostile archives."""

from __future__ import annotations

import datetime as dt
import io
import struct
import zipfile
from pathlib import Path

import numpy as np
import pytest

openpyxl = pytest.importorskip("openpyxl")
pd = pytest.importorskip("pandas")

from growthcore.errors import ImportFailure  # noqa: E402
from growthcore.io import load_bytes, load_file  # noqa: E402


def _rewrite(path: Path, member: str, old: bytes, new: bytes) -> None:
    with zipfile.ZipFile(path) as src:
        items = [(i, src.read(i.filename)) for i in src.infolist()]
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for info, data in items:
            if info.filename == member:
                assert old in data
                data = data.replace(old, new)
            dst.writestr(info, data)


def _formula_book(path: Path, cached: bool) -> None:
    book = openpyxl.Workbook()
    ws = book.active
    ws["A1"] = "Reactor B: dry weight"
    ws.merge_cells("A1:C1")
    # rows 2 and 3 stay empty; the table starts at row 4
    table = [("Time (h)", "Dry weight (g/L)"), (0, 0.5), (12, 1.0), (24, "=B6*2"), (36, 3.0)]
    for i, cells in enumerate(table):
        for j, v in enumerate(cells):
            ws.cell(row=4 + i, column=1 + j, value=v)
    book.save(path)
    if cached:
        _rewrite(path, "xl/worksheets/sheet1.xml", b"<f>B6*2</f><v />", b"<f>B6*2</f><v>2</v>")


def test_formula_cached_values_and_leading_rows(tmp_path: Path) -> None:
    path = tmp_path / "cached.xlsx"
    _formula_book(path, cached=True)
    r = load_file(path)
    assert r.report.header_row == 4
    s = r.series[0]
    assert list(s.t) == [0, 12, 24, 36] and list(s.p) == [0.5, 1.0, 2.0, 3.0]
    assert s.rows == (5, 6, 7, 8)
    text = "\n".join(r.report.notes)
    assert "merged cells (A1:C1)" in text and "above the header skipped" in text


def test_formula_without_cached_value_is_explained(tmp_path: Path) -> None:
    path = tmp_path / "uncached.xlsx"
    _formula_book(path, cached=False)
    r = load_file(path)
    assert list(r.series[0].p) == [0.5, 1.0, 3.0]
    (x,) = r.report.left_out
    assert x.column == "Dry weight (g/L)" and x.row == 7
    assert "formula =B6*2 has no saved result" in x.reason


def test_pandas_xlsx_round_trip(tmp_path: Path) -> None:
    rng = np.random.default_rng(3)
    frame = pd.DataFrame({"Time (d)": np.arange(10) * 0.5, "Biomass (g/L)": rng.uniform(0.1, 5, 10)})
    path = tmp_path / "pandas.xlsx"
    frame.to_excel(path, index=False, sheet_name="run 1")
    r = load_file(path)
    np.testing.assert_array_equal(r.series[0].t, frame["Time (d)"].to_numpy())
    # openpyxl writes floats with 16 significant digits, so the last bit may differ
    np.testing.assert_allclose(r.series[0].p, frame["Biomass (g/L)"].to_numpy(), rtol=1e-15, atol=0)
    assert r.report.sheet == "run 1" and r.series[0].time_unit == "d"


def test_pandas_xlsx_dates_and_wide(tmp_path: Path) -> None:
    stamps = pd.date_range("2024-05-01", periods=6, freq="D")
    frame = pd.DataFrame({"Date": stamps, "Plot 1": [1, 2, 4, 8, 16, 32], "Plot 2": [2, 3, 5, 9, 17, 33]})
    path = tmp_path / "dates.xlsx"
    frame.to_excel(path, index=False)
    r = load_file(path)
    assert [s.name for s in r.series] == ["Plot 1", "Plot 2"]
    assert list(r.series[0].t) == [0, 1, 2, 3, 4, 5] and r.series[0].time_unit == "d"


@pytest.mark.parametrize(
    "sep, decimal",
    [(",", "."), (";", ","), ("\t", "."), ("\t", ",")],
)
def test_pandas_csv_round_trip(tmp_path: Path, sep: str, decimal: str) -> None:
    rng = np.random.default_rng(5)
    frame = pd.DataFrame({"t (min)": np.arange(12) * 15.0, "OD600 [-]": rng.uniform(0.05, 1.5, 12).round(6)})
    path = tmp_path / "pandas.csv"
    frame.to_csv(path, index=False, sep=sep, decimal=decimal)
    r = load_file(path)
    assert r.report.delimiter == sep and r.report.decimal == decimal
    np.testing.assert_array_equal(r.series[0].t, frame["t (min)"].to_numpy())
    np.testing.assert_array_equal(r.series[0].p, frame["OD600 [-]"].to_numpy())
    assert (r.series[0].name, r.series[0].value_unit, r.series[0].time_unit) == ("OD600", "-", "min")


def test_sheet_choice(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    book.active.title = "notes"
    data = book.create_sheet("counts")
    for row in (["Year", "N"], [2001, 5], [2002, 9], [2003, 14]):
        data.append(row)
    other = book.create_sheet("other")
    for row in (["Year", "N"], [2001, 50], [2002, 90], [2003, 140]):
        other.append(row)
    path = tmp_path / "sheets.xlsx"
    book.save(path)
    r = load_file(path)
    assert r.report.sheet == "counts" and list(r.series[0].p) == [5, 9, 14]
    assert "first with data" in "\n".join(r.report.notes)
    assert list(load_file(path, sheet="OTHER").series[0].p) == [50, 90, 140]
    with pytest.raises(ImportFailure,
                       match="sheets.xlsx: no sheet named 'missing'; the sheets are 'notes', 'counts', 'other'"):
        load_file(path, sheet="missing")


def test_clock_durations_past_a_day_and_error_cells(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Time", "OD600 [-]"])
    for i, hours in enumerate([0, 12, 23.5, 24, 30, 48]):
        ws.append([hours / 24, 0.1 * (i + 1)])
        ws.cell(row=i + 2, column=1).number_format = "[h]:mm:ss"
    ws["B4"] = "#DIV/0!"
    ws["B5"] = "1,5"
    path = tmp_path / "clock.xlsx"
    book.save(path)
    r = load_file(path)
    assert list(r.series[0].t) == pytest.approx([0, 12, 24, 30, 48])
    (x,) = r.report.left_out
    assert (x.row, x.reason) == (4, "spreadsheet error value")


def test_text_numbers_with_decimal_comma(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    ws = book.active
    for row in (["Tag", "Zellen"], ["0", "1,5"], ["1", "2,25"], ["2", "3,0"]):
        ws.append(row)
    path = tmp_path / "textnums.xlsx"
    book.save(path)
    r = load_file(path)
    assert r.report.decimal == "," and list(r.series[0].p) == [1.5, 2.25, 3.0]
    assert r.series[0].time_unit == "" or r.series[0].time_column == "Tag"


def _small_zip(member: str = "xl/workbook.xml", payload: bytes = b"<workbook/>") -> bytes:
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        z.writestr(member, payload)
    return buf.getvalue()


def test_zip_bomb_by_declared_size() -> None:
    data = bytearray(_small_zip())
    # Claim a 4 GB member: the uncompressed-size field sits 24 bytes into the central directory
    # entry (PKWARE APPNOTE 4.3.12), and 22 bytes into the local header (4.3.7).
    central = data.index(b"PK\x01\x02")
    data[central + 24 : central + 28] = struct.pack("<I", 0xFFFFFFF0)
    data[22:26] = struct.pack("<I", 0xFFFFFFF0)
    with pytest.raises(ImportFailure, match=r"bomb.xlsx: the workbook would unpack to 4,295 MB.*zip bomb"):
        load_bytes(bytes(data), "bomb.xlsx")


def test_zip_bomb_real_ratio() -> None:
    data = _small_zip("xl/worksheets/sheet1.xml", b"\0" * 60_000_000)
    assert len(data) < 100_000
    with pytest.raises(ImportFailure, match="possible zip bomb"):
        load_bytes(data, "zeros.xlsx", max_bytes=200_000)


def test_corrupt_workbooks(tmp_path: Path) -> None:
    path = tmp_path / "good.xlsx"
    pd.DataFrame({"t": [0, 1, 2], "N": [1, 2, 3]}).to_excel(path, index=False)
    good = path.read_bytes()
    with pytest.raises(ImportFailure, match="cut.xlsx: the workbook is damaged"):
        load_bytes(good[: len(good) // 2], "cut.xlsx")
    with pytest.raises(ImportFailure, match="garbage.xlsx: the workbook is damaged or not one that can be read"):
        load_bytes(_small_zip("xl/workbook.xml", b"<not xml"), "garbage.xlsx")
    with pytest.raises(ImportFailure, match="not an .xlsx workbook"):
        load_bytes(_small_zip("word/document.xml"), "doc.xlsx")


def test_password_protected_and_old_xls() -> None:
    ole = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\0" * 504
    locked = ole + "EncryptionInfo".encode("utf-16-le") + b"\0" * 64
    with pytest.raises(ImportFailure, match="locked.xlsx: the workbook is password-protected"):
        load_bytes(locked, "locked.xlsx")
    with pytest.raises(ImportFailure, match=r"old.xls: this is an old-style Excel 97-2003 \(.xls\)"):
        load_bytes(ole, "old.xls")


def test_empty_workbook(tmp_path: Path) -> None:
    path = tmp_path / "empty.xlsx"
    openpyxl.Workbook().save(path)
    with pytest.raises(ImportFailure, match="empty.xlsx: every sheet of the workbook is empty"):
        load_file(path)


def test_xlsx_named_csv_is_refused() -> None:
    with pytest.raises(ImportFailure, match="zip archive"):
        load_bytes(_small_zip(), "sheet.csv")


def test_datetimes_in_workbook_are_naive_and_noted(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    ws = book.active
    ws.append(["Sampled", "N"])
    for i, stamp in enumerate(["2024-10-27 00:00", "2024-10-27 02:30", "2024-10-27 04:00"]):
        ws.append([dt.datetime.fromisoformat(stamp), i + 1])
    path = tmp_path / "naive.xlsx"
    book.save(path)
    r = load_file(path)
    # taken as written: 0, 2.5, 4 h
    assert list(r.series[0].t) == [0.0, 2.5, 4.0]
    assert "no UTC offset" in "\n".join(r.report.notes)
