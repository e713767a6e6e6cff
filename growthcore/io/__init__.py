"""Reading spreadsheets (CSV, TSV, XLSX) into series with an import report; writing safe CSV."""

from __future__ import annotations

from growthcore.io.loader import MIN_POINTS, load_bytes, load_file
from growthcore.io.report import ImportReport, ImportResult, LeftOut, SeriesSummary
from growthcore.io.writer import csv_text, safe_csv_cell, write_csv

__all__ = [
    "ImportReport",
    "ImportResult",
    "LeftOut",
    "MIN_POINTS",
    "SeriesSummary",
    "csv_text",
    "load_bytes",
    "load_file",
    "safe_csv_cell",
    "write_csv",
]
