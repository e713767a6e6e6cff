"""CSV that is safe to open in a spreadsheet program: no cell can start a formula."""

from __future__ import annotations

import csv
import io
import math
import os
import re
from typing import IO, Iterable, Sequence

#: First characters that make a spreadsheet program read a cell as a formula or command.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def safe_csv_cell(value: object) -> str:
    """The text of one CSV cell, with a leading apostrophe where it could start a formula.

    Numbers (and strings that are plain numbers such as ``-1.5``) are written unchanged so that
    they stay numbers; NaN and None become an empty cell.
    """
    if value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)) or type(value).__module__ == "numpy":
        try:
            x = float(value)  # type: ignore[arg-type]
        except (TypeError, ValueError):
            x = None
        if x is not None:
            if math.isnan(x):
                return ""
            if isinstance(value, int) or (hasattr(value, "dtype") and getattr(value.dtype, "kind", "") in "iu"):
                return str(int(value))  # type: ignore[call-overload]
            return repr(x) if math.isfinite(x) else ("inf" if x > 0 else "-inf")
    text = str(value)
    if _NUMBER.fullmatch(text):
        return text
    stripped = text.lstrip(" ")
    if text.startswith(FORMULA_TRIGGERS) or stripped.startswith(FORMULA_TRIGGERS[:4]):
        return "'" + text
    return text


def write_csv(path_or_buffer: str | os.PathLike[str] | IO[str], header: Sequence[object], rows: Iterable[Sequence[object]]) -> None:
    """Write UTF-8 CSV (comma, ``\\n`` line ends) with every cell passed through ``safe_csv_cell``."""
    if isinstance(path_or_buffer, (str, os.PathLike)):
        with open(path_or_buffer, "w", encoding="utf-8", newline="") as fh:
            _write(fh, header, rows)
    else:
        _write(path_or_buffer, header, rows)


def _write(fh: IO[str], header: Sequence[object], rows: Iterable[Sequence[object]]) -> None:
    writer = csv.writer(fh, lineterminator="\n")
    writer.writerow([safe_csv_cell(h) for h in header])
    for row in rows:
        writer.writerow([safe_csv_cell(c) for c in row])


def csv_text(header: Sequence[object], rows: Iterable[Sequence[object]]) -> str:
    """The same CSV as ``write_csv`` writes, as a string (for downloads)."""
    buf = io.StringIO()
    _write(buf, header, rows)
    return buf.getvalue()
