"""A corpus of awkward and malformed spreadsheets, each with the outcome a scientist should get.

Expected values are written out by hand from the file contents shown in each case (the
arithmetic is in the comments); messages are checked for the file name, row and column.
"""

from __future__ import annotations

import codecs
import hashlib
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from growthcore.errors import ImportFailure
from growthcore.io import ImportResult, load_bytes, load_file

SIMPLE = "Time (h),Dry weight (g/L)\n0,0.10\n12,0.20\n24,0.40\n36,0.80\n"


@dataclass
class Case:
    name: str
    filename: str
    content: bytes | str
    check: Callable[[ImportResult], None] | None = None
    refuse: tuple[str, ...] = ()
    kwargs: dict[str, Any] | None = None


def values(result: ImportResult, i: int = 0) -> tuple[list[float], list[float]]:
    s = result.series[i]
    return list(s.t), list(s.p)


def left(result: ImportResult) -> list[tuple[int | None, str, str]]:
    return [(x.row, x.column, x.reason) for x in result.report.left_out]


def notes(result: ImportResult) -> str:
    return "\n".join(result.report.notes)


def _check_simple(r: ImportResult) -> None:
    assert values(r) == ([0, 12, 24, 36], [0.1, 0.2, 0.4, 0.8])
    assert r.series[0].time_unit == "h" and r.series[0].value_unit == "g/L"
    assert r.series[0].rows == (2, 3, 4, 5)


def _check_bom(r: ImportResult) -> None:
    _check_simple(r)
    assert r.report.encoding == "utf-8-sig"
    assert r.series[0].time_column == "Time (h)"  # the BOM must not stick to the first header


def _check_utf16(r: ImportResult) -> None:
    _check_simple(r)
    assert r.report.encoding.startswith("utf-16")


def _check_latin1(r: ImportResult) -> None:
    assert r.report.encoding in ("cp1252", "latin-1")
    assert "not valid UTF-8" in notes(r)
    assert r.series[0].value_unit == "\u00b5g/mL"
    assert values(r)[1] == [1.5, 3.0, 6.0]


def _check_semicolon_comma(r: ImportResult) -> None:
    assert r.report.delimiter == ";" and r.report.decimal == ","
    assert values(r) == ([0.0, 0.5, 1.5], [1.25, 2.5, 1234.5])
    assert r.report.thousands == "."


def _check_thousands(r: ImportResult) -> None:
    assert r.report.decimal == "." and r.report.thousands == ","
    assert values(r)[1] == [1250.0, 2500.0, 1234567.5]


def _check_title_lines(r: ImportResult) -> None:
    assert r.report.header_row == 4
    assert values(r) == ([0, 1, 2], [5.0, 6.0, 7.0])
    assert r.series[0].rows == (5, 6, 7)
    assert "above the header skipped (rows 1-2)" in notes(r)


def _check_blank_rows(r: ImportResult) -> None:
    assert r.series[0].rows == (2, 4, 7)
    assert "3 blank row(s) skipped (rows 3, 5-6)" in notes(r)


def _check_non_numeric(r: ImportResult) -> None:
    assert values(r) == ([0, 2, 3], [1.0, 3.0, 4.0])
    assert left(r) == [(3, "Count", "not a number")]
    assert r.report.left_out[0].value == "lost"


def _check_missing_marks(r: ImportResult) -> None:
    assert [x.row for x in r.report.left_out] == [3, 4]
    assert all(x.reason in ("missing-value mark", "blank value") for x in r.report.left_out)


def _check_duplicates_kept_all(r: ImportResult) -> None:
    # repeated times are replicates: every point kept by default, counted in the report
    assert values(r) == ([0, 1, 1, 2], [1.0, 2.0, 3.0, 4.0])
    assert (r.report.series[0].replicate_times, r.report.series[0].replicate_points) == (1, 2)
    assert "2 replicate points at 1 repeated time(s): every point kept" in notes(r)
    assert not r.report.left_out and r.report.replicates == "all"


def _check_duplicates_kept_first(r: ImportResult) -> None:
    assert values(r) == ([0, 1, 2], [1.0, 2.0, 4.0])
    (row, col, reason), = left(r)
    assert row == 4 and col == "N" and "replicate at t = 1" in reason and "row 3" in reason and "as chosen" in reason


def _check_duplicates_averaged(r: ImportResult) -> None:
    # (2 + 3) / 2 = 2.5, from rows 3 and 4
    assert values(r) == ([0, 1, 2], [1.0, 2.5, 4.0])
    assert r.report.series[0].averaged == ((3, 1.0, 2),)
    assert "averaged into one point at each time" in notes(r)
    assert not r.report.left_out


def _check_unsorted(r: ImportResult) -> None:
    assert values(r) == ([0, 1, 2, 3], [1.0, 2.0, 3.0, 4.0])
    assert r.series[0].rows == (2, 4, 3, 5)
    assert "not in order (row 3 has t = 2 after t = 0)" not in notes(r)
    assert "not in order (row 4 has t = 1 after t = 2): sorted" in notes(r)


def _check_negative(r: ImportResult) -> None:
    assert values(r)[1] == [0.5, 0.0, -0.2, 0.9]
    assert [n[0] for n in r.report.series[0].nonpositive] == [3, 4]
    assert "2 value(s) <= 0 kept (rows 3-4)" in notes(r)


def _check_units(r: ImportResult) -> None:
    names = [(s.name, s.value_unit) for s in r.series]
    assert names == [("Dry weight", "g/L"), ("OD600", "-")]
    assert r.report.layout == "wide"


def _check_clock_past_24(r: ImportResult) -> None:
    # 23:45:00 = 23.75 h, 24:00:00 = 24 h, 36:00:00 = 36 h, 1:02:30:00 = 24 + 2.5 = 26.5 h
    t, _ = values(r)
    assert t == [0.0, 0.25, 23.75, 24.0, 26.5, 36.0]
    assert r.series[0].time_unit == "h"


def _check_clock_minutes(r: ImportResult) -> None:
    # 0:15:00 = 15 min, 1:30:00 = 90 min
    assert values(r)[0] == [0.0, 15.0, 90.0]
    assert r.series[0].time_unit == "min"


def _check_dst_offsets(r: ImportResult) -> None:
    # Offsets as written: 00:00+01:00 = 23:00Z; 01:30+01:00 = 00:30Z; 03:30+02:00 = 01:30Z;
    # 05:00+02:00 = 03:00Z. Elapsed from 23:00Z: 0, 1.5, 2.5, 4.0 h (the wall clock says 0, 1.5, 3.5, 5).
    assert values(r)[0] == [0.0, 1.5, 2.5, 4.0]
    assert "UTC offsets" in notes(r)


def _check_dst_naive(r: ImportResult) -> None:
    # Naive local stamps are taken as written: 0, 1.5, 3.5, 5 h, and the assumption is noted.
    assert values(r)[0] == [0.0, 1.5, 3.5, 5.0]
    assert "no UTC offset" in notes(r) and "daylight-saving" in notes(r)


def _check_dates_days(r: ImportResult) -> None:
    # 28.02.2024 -> 01.03.2024 is 2 days (2024 is a leap year), -> 05.03.2024 is 6 days
    assert values(r)[0] == [0.0, 2.0, 6.0]
    assert r.series[0].time_unit == "d"


def _check_dates_years(r: ImportResult) -> None:
    # 2020-01-01 -> 2021-01-01 is 366 days = 366/365.25 yr
    t = values(r)[0]
    assert t[0] == 0.0 and t[1] == pytest.approx(366 / 365.25)
    assert "365.25" in notes(r)


def _check_wide(r: ImportResult) -> None:
    assert [s.name for s in r.series] == ["A1", "A2", "A3"]
    assert list(r.series[2].p) == [0.1, 0.3, 0.5]
    assert r.report.layout == "wide"


def _check_long(r: ImportResult) -> None:
    assert [s.name for s in r.series] == ["flask 1", "flask 2"]
    assert list(r.series[1].t) == [0, 1, 2] and list(r.series[1].p) == [2.0, 4.0, 8.0]
    assert r.series[1].rows == (3, 5, 7)
    assert r.report.layout == "long"


def _check_tab(r: ImportResult) -> None:
    assert r.report.delimiter == "\t"
    _check_simple(r)


def _check_no_header(r: ImportResult) -> None:
    assert r.report.header_row is None
    assert r.series[0].time_column == "column 1"
    assert values(r) == ([1, 2, 3], [10.0, 20.0, 40.0])


def _check_numeric_time_unit_override(r: ImportResult) -> None:
    # 90 min = 1.5 h
    assert values(r)[0] == [0.0, 0.5, 1.5]
    assert "converted from min" in notes(r)


def _check_units_row(r: ImportResult) -> None:
    assert r.series[0].time_unit == "d" and r.series[0].value_unit == "cells/mL"
    assert r.series[0].rows == (3, 4, 5)


def _check_footer(r: ImportResult) -> None:
    assert len(r.series[0]) == 3
    assert left(r)[0][0] == 6 and "not a number, clock time or date" in left(r)[0][2]


def _check_crlf_quoted(r: ImportResult) -> None:
    _check_simple(r)


def _check_too_few_one_series(r: ImportResult) -> None:
    assert [s.name for s in r.series] == ["a"]
    assert any("only 2 usable point(s)" in x.reason for x in r.report.left_out)


CASES = [
    Case("plain", "plain.csv", SIMPLE, _check_simple),
    Case("bom", "bom.csv", codecs.BOM_UTF8 + SIMPLE.encode(), _check_bom),
    Case("utf16", "utf16.csv", SIMPLE.encode("utf-16"), _check_utf16),
    Case("utf16-nobom", "utf16le.txt", SIMPLE.encode("utf-16-le"), _check_utf16),
    Case("latin1", "latin1.csv", "Day,Protein (\u00b5g/mL)\n0,1.5\n1,3.0\n2,6.0\n".encode("latin-1"), _check_latin1),
    Case("semicolon-decimal-comma", "de.csv", "Zeit (h);Wert\n0;1,25\n0,5;2,5\n1,5;1.234,5\n", _check_semicolon_comma),
    Case("thousands", "counts.csv", 'Year,Count\n1,"1,250"\n2,"2,500"\n3,"1,234,567.5"\n', _check_thousands),
    Case("title-lines", "titled.csv", "Pilot reactor B, run 3\nOperator: A. N. Other\n\nt,N\n0,5\n1,6\n2,7\n",
         _check_title_lines),
    Case("blank-rows", "blanks.csv", "t,N\n0,1\n\n1,2\n,\n\n2,3\n", _check_blank_rows),
    Case("non-numeric", "text.csv", "t,Count\n0,1\n1,lost\n2,3\n3,4\n", _check_non_numeric),
    Case("missing-marks", "na.csv", "t,N\n0,1\n1,NA\n2,\n3,4\n4,5\n", _check_missing_marks),
    Case("duplicates", "dups.csv", "t,N\n0,1\n1,2\n1,3\n2,4\n", _check_duplicates_kept_all),
    Case("duplicates-first", "dups.csv", "t,N\n0,1\n1,2\n1,3\n2,4\n", _check_duplicates_kept_first,
         kwargs={"replicates": "first"}),
    Case("duplicates-averaged", "dups.csv", "t,N\n0,1\n1,2\n1,3\n2,4\n", _check_duplicates_averaged,
         kwargs={"replicates": "mean"}),
    Case("unsorted", "unsorted.csv", "t,N\n0,1\n2,3\n1,2\n3,4\n", _check_unsorted),
    Case("negative", "neg.csv", "t,OD\n0,0.5\n1,0\n2,-0.2\n3,0.9\n", _check_negative),
    Case("header-units", "units.csv", "Time (h),Dry weight (g/L),OD600 [-]\n0,1,0.1\n1,2,0.2\n2,3,0.3\n", _check_units),
    Case("clock-past-24", "clock.csv",
         "Time,OD\n0:00:00,0.1\n0:15:00,0.1\n23:45:00,0.2\n24:00:00,0.3\n1:02:30:00,0.35\n36:00:00,0.4\n",
         _check_clock_past_24),
    Case("clock-minutes", "clock.csv", "Time,OD\n0:00:00,1\n0:15:00,2\n1:30:00,3\n", _check_clock_minutes,
         kwargs={"time_unit": "min"}),
    Case("dst-offsets", "dst.csv",
         "Sampled,N\n2024-03-31T00:00+01:00,1\n2024-03-31T01:30+01:00,2\n2024-03-31T03:30+02:00,3\n"
         "2024-03-31T05:00+02:00,4\n", _check_dst_offsets),
    Case("dst-naive", "dst.csv",
         "Sampled,N\n2024-03-31 00:00,1\n2024-03-31 01:30,2\n2024-03-31 03:30,3\n2024-03-31 05:00,4\n",
         _check_dst_naive),
    Case("dates-day-first", "dates.csv", "Date;N\n28.02.2024;1\n01.03.2024;2\n05.03.2024;3\n", _check_dates_days),
    Case("dates-years", "dates.csv", "Date,N\n2020-01-01,1\n2021-01-01,2\n2022-01-01,3\n", _check_dates_years,
         kwargs={"time_unit": "yr"}),
    Case("wide", "plate.csv", "Time,A1,A2,A3\n0,0.1,0.1,0.1\n1,0.2,0.2,0.3\n2,0.4,0.3,0.5\n", _check_wide),
    Case("long-series", "long.csv",
         "Flask,t,N\nflask 1,0,1\nflask 2,0,2\nflask 1,1,2\nflask 2,1,4\nflask 1,2,4\nflask 2,2,8\n", _check_long),
    Case("tab", "tab.tsv", SIMPLE.replace(",", "\t"), _check_tab),
    Case("no-header", "bare.csv", "1,10\n2,20\n3,40\n", _check_no_header),
    Case("time-unit-convert", "minutes.csv", "Time (min),N\n0,1\n30,2\n90,3\n", _check_numeric_time_unit_override,
         kwargs={"time_unit": "h"}),
    Case("units-row", "unitsrow.csv", "Day,Density\n[d],(cells/mL)\n0,1\n1,2\n2,4\n", _check_units_row),
    Case("footer", "footer.csv", "t,N\n0,1\n1,2\n2,4\n\nMean,2.3\n", _check_footer),
    Case("crlf-quoted", "crlf.csv", SIMPLE.replace("\n", "\r\n").replace("Time (h)", '"Time (h)"'), _check_crlf_quoted),
    Case("too-few-one-series", "few.csv", "g,t,N\na,0,1\na,1,2\na,2,3\nb,0,1\nb,1,2\n", _check_too_few_one_series),
    Case("title-with-commas-semicolon", "titled-de.csv",
         "Pilotreaktor B, Lauf 3\nZeit (h);Wert\n0;1,25\n0,5;2,5\n1,5;1,5\n",
         lambda r: (r.report.delimiter == ";" and values(r) == ([0.0, 0.5, 1.5], [1.25, 2.5, 1.5]))
         or pytest.fail(str(values(r)))),
    Case("space-thousands-decimal-comma", "fr.csv", "Temps (j);Cellules\n0;1 250,5\n1;2 500,25\n2;10 000\n",
         lambda r: (values(r)[1] == [1250.5, 2500.25, 10000.0] and r.report.thousands == " ")
         or pytest.fail(str(values(r)))),
    Case("quoted-newline-header", "quoted.csv", '"Time\n(h)",N\n0,1\n1,2\n2,3\n',
         lambda r: (r.series[0].time_unit == "h" and r.series[0].rows == (2, 3, 4)) or pytest.fail(str(r.series[0]))),
    # Refusals: (fragment, ...) must all appear in the one-line message.
    Case("empty", "empty.csv", b"", refuse=("empty.csv", "empty")),
    Case("whitespace-only", "blank.csv", "  \n\n \n", refuse=("blank.csv", "no text")),
    Case("binary-junk", "junk.csv", bytes(range(256)) * 8, refuse=("junk.csv", "not a spreadsheet")),
    Case("one-column", "one.csv", "N\n1\n2\n3\n", refuse=("one.csv", "no numeric time and value columns")),
    Case("no-numeric-values", "words.csv", "t,name\n0,a\n1,b\n2,c\n",
         refuse=("words.csv", "no numeric time and value columns")),
    Case("too-few", "few.csv", "t,N\n0,1\n1,2\n", refuse=("few.csv", "too few usable points", "at least 3")),
    Case("too-few-after-bad", "few.csv", "t,N\n0,1\n1,x\n2,y\n3,2\n",
         refuse=("few.csv", "row 3", "column 'N'", "not a number")),
    Case("xls-named", "old.xls", b"abc,def\n", refuse=("old.xls", ".xls files are not read")),
    Case("text-named-xlsx", "fake.xlsx", SIMPLE, refuse=("fake.xlsx", "not an .xlsx workbook")),
    Case("bad-time-unit", "plain.csv", SIMPLE, refuse=("time unit must be one of",), kwargs={"time_unit": "fortnight"}),
    Case("unknown-column", "plain.csv", SIMPLE, refuse=("no column 'Biomass'", "'Time (h)'"),
         kwargs={"value": "Biomass"}),
    Case("oversize", "big.csv", SIMPLE * 20, refuse=("big.csv", "over the limit of 100 bytes"),
         kwargs={"max_bytes": 100}),
    Case("utf8-bom-damaged", "bad16.csv", codecs.BOM_UTF16_LE + b"\x00\xd8a\x00", refuse=("bad16.csv", "utf-16")),
]


@pytest.mark.parametrize("case", CASES, ids=[c.name for c in CASES])
def test_corpus_file(case: Case, tmp_path: Path) -> None:
    data = case.content.encode("utf-8") if isinstance(case.content, str) else case.content
    path = tmp_path / case.filename
    path.write_bytes(data)
    kwargs = case.kwargs or {}
    if case.refuse:
        with pytest.raises(ImportFailure) as info:
            load_file(path, **kwargs)
        message = str(info.value)
        assert "\n" not in message
        for fragment in case.refuse:
            assert fragment in message, message
        return
    result = load_file(path, **kwargs)
    assert case.check is not None
    case.check(result)
    report = result.report.to_dict()
    assert report["source"] == case.filename
    # Nothing silently dropped: every data row is used by a series, listed as left out, or
    # merged into an averaged point.
    used_rows = {r for s in result.series for r in (s.rows or ())}
    left_rows = {x.row for x in result.report.left_out}
    averaged = sum(n - 1 for s in result.report.series for _, _, n in s.averaged)
    assert len(used_rows | left_rows) + averaged == report["rows_read"]


def test_corpus_is_large_enough() -> None:
    assert len(CASES) >= 30


def test_load_bytes_matches_load_file(tmp_path: Path) -> None:
    path = tmp_path / "same.csv"
    path.write_text(SIMPLE)
    a = load_file(path).report.to_dict()
    b = load_bytes(SIMPLE.encode(), "same.csv").report.to_dict()
    assert a == b
    assert a["sha256"] == hashlib.sha256(SIMPLE.encode()).hexdigest()


def test_missing_file_is_an_import_failure(tmp_path: Path) -> None:
    with pytest.raises(ImportFailure, match="nothere.csv: cannot be opened"):
        load_file(tmp_path / "nothere.csv")


def test_overrides_pick_columns() -> None:
    text = "Time (h),Biomass (g/L),Temperature (C)\n0,1,30\n1,2,31\n2,4,30\n"
    r = load_bytes(text.encode(), "pick.csv", value="Biomass")
    assert [s.name for s in r.series] == ["Biomass"] and r.report.layout == "long"
    r = load_bytes(text.encode(), "pick.csv", time="1", value="3")
    assert r.series[0].value_unit == "C"


def test_report_json_shape() -> None:
    r = load_bytes(b"t,N\n0,1\n1,x\n2,3\n3,4\n", "shape.csv")
    d = r.report.to_dict()
    for key in ("source", "sha256", "encoding", "delimiter", "decimal", "header_row", "layout",
                "rows_read", "series", "left_out", "notes"):
        assert key in d
    s = d["series"][0]
    assert set(s) >= {"name", "time", "value", "points_used"}
    assert set(s["time"]) == {"column", "unit"} and set(s["value"]) == {"column", "unit"}
    assert d["left_out"] == [{"row": 3, "column": "N", "value": "x", "reason": "not a number"}]
    import json

    from growthcore.io import ImportReport

    assert ImportReport.from_dict(json.loads(json.dumps(d))).to_dict() == d
    text = r.report.to_text()
    assert "shape.csv" in text and "row 3, column 'N'" in text and "not a number" in text


def test_series_are_usable_numbers() -> None:
    r = load_bytes(b"t,N\n0,1\n1,2\n2,4\n", "ok.csv")
    s = r.series[0]
    assert np.all(np.diff(s.t) > 0) and s.step().regular and s.step().h == 1.0
