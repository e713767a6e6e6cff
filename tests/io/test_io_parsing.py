"""The pieces of the import on their own: numbers, clock times, dates, headers, layout guesses."""

from __future__ import annotations

import datetime as dt

import pytest

from growthcore.io import load_bytes
from growthcore.io.headers import split_unit
from growthcore.io.numbers import NumberFormat, detect_number_format, parse_number
from growthcore.io.timeparse import parse_calendar, parse_duration

POINT = NumberFormat(".")
COMMA = NumberFormat(",")


@pytest.mark.parametrize(
    "text, fmt, expected",
    [
        ("1.25", POINT, 1.25), ("-3", POINT, -3.0), ("2e-3", POINT, 0.002), (".5", POINT, 0.5),
        ("1,234,567.5", POINT, 1234567.5), ("1 234.5", POINT, 1234.5), ("1'234.5", POINT, 1234.5),
        ("1,25", COMMA, 1.25), ("1.234,5", COMMA, 1234.5), ("1\u00a0234,5", COMMA, 1234.5),
        ("2,5E-3", COMMA, 0.0025),
        ("1,25", POINT, None), ("1.2.3", POINT, None), ("12,34", POINT, None), ("1,234 567", POINT, None),
        ("abc", POINT, None), ("inf", POINT, None), ("nan", POINT, None), ("1e999", POINT, None),
    ],
)
def test_parse_number(text: str, fmt: NumberFormat, expected: float | None) -> None:
    assert parse_number(text, fmt) == expected


def test_decimal_detection() -> None:
    assert detect_number_format(["1,25", "2,5", "3"], ";").decimal == ","
    assert detect_number_format(["1.25", "2.5"], ";").decimal == "."
    # "1,250" alone is ambiguous: a comma in a semicolon file, thousands in a comma file
    assert detect_number_format(["1,250"], ";").decimal == ","
    assert detect_number_format(["1,250"], ",").decimal == "."
    # "1.250" alone keeps the point
    assert detect_number_format(["1.250"], ";").decimal == "."


@pytest.mark.parametrize(
    "text, seconds",
    [
        ("0:15:00", 900), ("36:00:00", 129600), ("1:02:30:00", 95400), ("0:00:05.5", 5.5),
        ("12:30", 45000), ("1.02:30:00", 95400), ("1 day, 2:30:00", 95400), ("2 days 00:00:00", 172800),
        ("-0:15:00", -900),
    ],
)
def test_parse_duration(text: str, seconds: float) -> None:
    # d:h:m:s arithmetic: 1:02:30:00 = 86400 + 2*3600 + 30*60 = 95400 s
    assert parse_duration(text) == seconds


@pytest.mark.parametrize("text", ["0:60:00", "1:24:00:00", "1:2:3", "a:00", "1:00:00:00:00", "12"])
def test_parse_duration_rejects(text: str) -> None:
    assert parse_duration(text) is None


def test_parse_calendar() -> None:
    aware = parse_calendar("2024-03-31T03:00+02:00")
    assert aware is not None and aware.kind == "aware"
    assert aware.moment == dt.datetime(2024, 3, 31, 1, 0, tzinfo=dt.timezone.utc)
    z = parse_calendar("2024-03-31T01:00:00Z")
    assert z is not None and z.moment == aware.moment
    d = parse_calendar("05/06/2024", day_first=False)
    assert d is not None and d.kind == "date" and d.moment == dt.datetime(2024, 5, 6)
    assert parse_calendar("31.02.2024") is None


@pytest.mark.parametrize(
    "header, name, unit",
    [
        ("Dry weight (g/L)", "Dry weight", "g/L"), ("OD600 [-]", "OD600", "-"), ("t / h", "t", "h"),
        ("Time in min", "Time", "min"), ("Counts", "Counts", ""),
        ("  Cell  density (cells/mL) ", "Cell density", "cells/mL"),
        ("Biomass in reactor", "Biomass in reactor", ""),
    ],
)
def test_split_unit(header: str, name: str, unit: str) -> None:
    assert split_unit(header) == (name, unit)


def test_numeric_replicate_column_names_series() -> None:
    text = "Replicate,Hours,OD\n1,0,0.1\n1,1,0.2\n1,2,0.4\n2,0,0.1\n2,1,0.3\n2,2,0.5\n"
    r = load_bytes(text.encode(), "reps.csv")
    assert [s.name for s in r.series] == ["1", "2"] and r.series[0].time_unit == "h"


def test_unique_sample_ids_are_not_series() -> None:
    text = "Sample,t,N\nS1,0,1\nS2,1,2\nS3,2,4\n"
    r = load_bytes(text.encode(), "ids.csv")
    assert len(r.series) == 1 and "column 'Sample' (text) is not used" in "\n".join(r.report.notes)


def test_mixed_offsets_leave_out_the_odd_one() -> None:
    text = "When,N\n2024-01-01T00:00+00:00,1\n2024-01-01T01:00+00:00,2\n2024-01-01 02:00,3\n2024-01-01T03:00+00:00,4\n"
    r = load_bytes(text.encode(), "mixed.csv")
    assert list(r.series[0].t) == [0.0, 1.0, 3.0]
    (x,) = r.report.left_out
    assert x.row == 4 and "without a UTC offset" in x.reason


def test_month_first_dates_detected() -> None:
    text = "Date,N\n03/30/2024,1\n03/31/2024,2\n04/01/2024,3\n"
    r = load_bytes(text.encode(), "us.csv")
    assert list(r.series[0].t) == [0.0, 1.0, 2.0]


def test_ambiguous_slash_dates_noted() -> None:
    text = "Date,N\n01/02/2024,1\n02/02/2024,2\n03/02/2024,3\n"
    r = load_bytes(text.encode(), "amb.csv")
    assert list(r.series[0].t) == [0.0, 1.0, 2.0]  # day first: 1, 2, 3 February
    assert "read as day/month/year" in "\n".join(r.report.notes)


def test_left_out_keeps_the_cell_as_written_and_in_row_order() -> None:
    text = "Zeit (h);Wert\n0;0,1\n1;x\n1;0,2\n1;0,25\n2;0,3\n3;0,4\n"
    r = load_bytes(text.encode(), "de.csv")
    assert r.series[0].time_column == "Zeit (h)"
    # the two values at t = 1 are replicates, both kept
    assert [(x.row, x.value) for x in r.report.left_out] == [(3, "x")]
    assert list(r.series[0].t) == [0, 1, 1, 2, 3] and list(r.series[0].p) == [0.1, 0.2, 0.25, 0.3, 0.4]
    assert "time column 'Zeit (h)' chosen: its header names a time" in r.report.notes


def test_clock_times_of_day_that_pass_midnight_continue_into_the_next_day() -> None:
    """An overnight run logged by wall-clock time (invented readings): 24 h is added after 23:30."""
    text = "clock,od\n22:30,0.10\n23:00,0.12\n23:30,0.15\n00:00,0.19\n00:30,0.24\n01:00,0.30\n"
    r = load_bytes(text.encode(), "overnight.csv")
    assert list(r.series[0].t) == [22.5, 23.0, 23.5, 24.0, 24.5, 25.0]
    assert list(r.series[0].p) == [0.10, 0.12, 0.15, 0.19, 0.24, 0.30]
    assert any("pass midnight at row(s) 5" in n for n in r.report.notes)


def test_long_layout_restarts_are_not_read_as_midnight() -> None:
    """Each series restarting at 0:00 is a new series, not a new day; the crossing is per series."""
    text = ("well,clock,od\nA,23:00,0.1\nA,23:30,0.2\nA,00:00,0.3\nA,00:30,0.4\n"
            "B,23:00,0.1\nB,23:30,0.2\nB,00:00,0.35\nB,00:30,0.5\n")
    r = load_bytes(text.encode(), "plates.csv")
    assert [list(s.t) for s in r.series] == [[23.0, 23.5, 24.0, 24.5]] * 2


@pytest.mark.parametrize("clock, crossing", [
    (["01:00", "03:00", "02:00", "04:00"], False),   # a shuffled row
    (["01:00", "02:00", "03:00", "00:30"], False),   # the 'crossing' would be a 21.5 h step among 1 h steps
    (["20:00", "22:00", "23:00", "01:00"], True),    # a 2 h step across midnight among 1-2 h steps
], ids=["shuffled", "too-long-a-step", "crossing"])
def test_midnight_needs_the_pattern_of_a_crossing(clock: list[str], crossing: bool) -> None:
    text = "clock,od\n" + "".join(f"{c},{0.1 * (i + 1):.1f}\n" for i, c in enumerate(clock))
    r = load_bytes(text.encode(), "odd.csv")
    notes = "\n".join(r.report.notes)
    assert ("pass midnight" in notes) is crossing
    assert ("sorted by time" in notes) is not crossing
    if crossing:
        assert list(r.series[0].t) == [20.0, 22.0, 23.0, 25.0]


def test_elapsed_durations_beyond_a_day_are_never_unwrapped() -> None:
    text = "elapsed,od\n22:00:00,0.1\n30:00:00,0.2\n26:00:00,0.3\n40:00:00,0.4\n"
    r = load_bytes(text.encode(), "elapsed.csv")
    notes = "\n".join(r.report.notes)
    assert "pass midnight" not in notes and list(r.series[0].t) == [22.0, 26.0, 30.0, 40.0]


@pytest.mark.parametrize("text", [
    "h,a,b\n0,1.5,-2\n1,2.5e1,0\n2,+3.,.5\n3,4,5\n",                 # exponents, signs, a zero and a negative
    "h,a,b\n0,1.5,2\n2,2.5,3\n1,3.5,4\n3,4,5\n",                   # unsorted: the general path sorts
    "h,a,b\n0,1.5,2\n1,2.5,3\n1,3.5,4\n3,4,5\n",                   # a repeated time: the general path decides
    "h,a,b\n0,1.5,2\n1,NA,3\n2,3.5,1e999\n3,4,5\n",                # a missing mark and an overflow: per cell
])
def test_whole_column_conversion_reads_as_the_per_cell_rules(text: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """The one-call conversion of clean columns gives the same series and report as the per-cell path."""
    import growthcore.io.loader as loader

    quick = load_bytes(text.encode(), "cols.csv")
    monkeypatch.setattr(loader, "plain_number_column", lambda cells: None)
    slow = load_bytes(text.encode(), "cols.csv")
    assert [(s.name, list(s.t), list(s.p), s.rows) for s in quick.series] == \
        [(s.name, list(s.t), list(s.p), s.rows) for s in slow.series]
    assert quick.report.to_dict() == slow.report.to_dict()


def test_report_lists_every_column_and_the_series_not_read() -> None:
    text = "Hours,Temp (C),A1,A2,Comment\n0,30,0.1,0.1,start\n1,30,0.2,,\n2,31,0.4,,\n3,31,0.8,,end\n"
    r = load_bytes(text.encode(), "plate.csv", time="Hours", value=["A1", "A2"])
    assert r.report.columns == ("Hours", "Temp (C)", "A1", "A2", "Comment")
    assert r.report.not_read == (("A2", "only 1 usable point(s)"),)
    assert [s.name for s in r.series] == ["A1"]
    text_report = r.report.to_text()
    assert "Columns (5):" in text_report
    assert [(x.column, x.role) for x in r.report.roles] == [
        ("Hours", "time"), ("Temp (C)", "measurement"), ("A1", "value"), ("A2", "value"), ("Comment", "unused")]
    assert "A2: not read (only 1 usable point(s))" in text_report
    again = type(r.report).from_dict(r.report.to_dict())
    assert again.columns == r.report.columns and again.not_read == r.report.not_read
