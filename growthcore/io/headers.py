"""Finding the header row and splitting headers such as ``Dry weight (g/L)`` into name and unit."""

from __future__ import annotations

import datetime as dt
import math
import re
from collections.abc import Sequence
from dataclasses import dataclass

from growthcore.io.numbers import NumberFormat, is_missing, parse_number
from growthcore.io.timeparse import canonical_unit, parse_calendar, parse_duration

_UNIT_TAIL = re.compile(r"^(?P<name>.*?\S)\s*(?:\((?P<p>[^()]*)\)|\[(?P<b>[^\[\]]*)\])$")
_SLASH_UNIT = re.compile(r"^(?P<name>.*?\S)\s+/\s+(?P<unit>\S.*)$")
_IN_UNIT = re.compile(r"^(?P<name>.*?\S)\s+in\s+(?P<unit>[^\s]+)$", re.IGNORECASE)

#: How many rows from the top are searched for the header.
HEADER_SEARCH_ROWS = 100


@dataclass(frozen=True)
class Column:
    """One column: its header text as written, the name and unit read from it, its position."""

    index: int
    header: str
    name: str
    unit: str

    @property
    def label(self) -> str:
        """The header as the user wrote it, or a positional name when the column has none."""
        return self.header or self.name


def split_unit(header: str) -> tuple[str, str]:
    """``Dry weight (g/L)`` -> (``Dry weight``, ``g/L``); ``OD600 [-]`` -> (``OD600``, ``-``)."""
    text = " ".join(header.split())
    m = _UNIT_TAIL.match(text)
    if m:
        unit = (m.group("p") if m.group("p") is not None else m.group("b")).strip()
        return m.group("name").strip(), unit
    m = _SLASH_UNIT.match(text)
    if m:
        return m.group("name").strip(), m.group("unit").strip()
    m = _IN_UNIT.match(text)
    if m and canonical_unit(m.group("unit")):
        return m.group("name").strip(), m.group("unit").strip()
    return text, ""


def cell_kind(value: object, fmt: NumberFormat) -> str:
    """``blank``, ``number``, ``time`` (clock time or date) or ``text``."""
    if value is None:
        return "blank"
    if isinstance(value, bool):
        return "text"
    if isinstance(value, (int, float)):
        return "number" if value == value else "blank"
    if isinstance(value, (dt.datetime, dt.date, dt.time, dt.timedelta)):
        return "time"
    text = str(value).strip()
    if is_missing(text):
        return "blank"
    if parse_number(text, fmt) is not None:
        return "number"
    if parse_duration(text) is not None or parse_calendar(text) or parse_calendar(text, day_first=False):
        return "time"
    return "text"


def _is_data_row(kinds: Sequence[str], placeholders: int = 0) -> bool:
    """Two numbers or times, or one beside a placeholder (``nan``, ``inf``, ``1e309``, ``NA``).

    A series may start with placeholders; its first rows are data all the same, so the header
    just above them must not be skipped.
    """
    real = sum(k in ("number", "time") for k in kinds)
    return real >= 2 or (real >= 1 and real + placeholders >= 2)


def is_placeholder(value: object) -> bool:
    """A missing-value mark or a number no float holds: a cell of data that the value checks leave out."""
    if value is None or isinstance(value, bool):
        return False
    if isinstance(value, float):
        return not math.isfinite(value)
    if not isinstance(value, str):
        return False
    text = value.strip()
    if not text:
        return False
    if is_missing(text):
        return True
    try:
        return not math.isfinite(float(text))
    except ValueError:
        return False


@dataclass(frozen=True)
class HeaderGuess:
    """Where the header is (indexes into the table's rows) and where data start."""

    header: int | None
    units: int | None
    data_start: int


def find_header(rows: Sequence[Sequence[object]], fmt: NumberFormat) -> HeaderGuess | None:
    """The first row with text in two or more cells that is followed by a row of data.

    Rows above it (titles, comments, metadata) are skipped. A text-only row between the header
    and the data, of short cells, is taken as a row of units. None when no data row is found.
    """
    top = rows[: HEADER_SEARCH_ROWS + 3]
    kinds = [[cell_kind(v, fmt) for v in row] for row in top]
    spare = [sum(is_placeholder(v) for v in row) for row in top]
    nonblank = [i for i, k in enumerate(kinds) if any(x != "blank" for x in k) or spare[i]]
    for pos, i in enumerate(nonblank):
        if i >= HEADER_SEARCH_ROWS:
            break
        k = kinds[i]
        if _is_data_row(k, spare[i]):
            return HeaderGuess(None, None, i)
        filled = sum(x != "blank" for x in k)
        if filled < 2 or "text" not in k:
            continue
        following = nonblank[pos + 1 : pos + 3]
        if not following:
            continue
        nxt = following[0]
        if _is_data_row(kinds[nxt], spare[nxt]):
            return HeaderGuess(i, None, nxt)
        if len(following) > 1:
            after = following[1]
            if _is_data_row(kinds[after], spare[after]) and _looks_like_units(rows[nxt], kinds[nxt]):
                return HeaderGuess(i, nxt, after)
    return None


def _looks_like_units(row: Sequence[object], kinds: Sequence[str]) -> bool:
    cells = [str(v).strip() for v, k in zip(row, kinds, strict=True) if k != "blank"]
    return bool(cells) and all(k in ("text", "blank") for k in kinds) and all(len(c) <= 16 for c in cells)


def make_columns(
    rows: Sequence[Sequence[object]], guess: HeaderGuess, width: int
) -> tuple[list[Column], list[str]]:
    """Columns named from the header (and units) row; unnamed ones get ``column N``."""
    notes: list[str] = []
    header = list(rows[guess.header]) if guess.header is not None else []
    units = list(rows[guess.units]) if guess.units is not None else []
    columns: list[Column] = []
    seen: dict[str, int] = {}
    for j in range(width):
        raw = header[j] if j < len(header) else None
        text = "" if raw is None else " ".join(str(raw).split())
        name, unit = split_unit(text) if text else (f"column {j + 1}", "")
        if units and j < len(units) and units[j] is not None and str(units[j]).strip():
            unit_text = str(units[j]).strip()
            unit = unit_text[1:-1].strip() if unit_text[:1] in "([" and unit_text[-1:] in ")]" else unit_text
        if not unit:
            implied = canonical_unit(name)
            if implied and name.lower() not in ("m", "a", "d", "y", "s"):
                unit = implied
        key = (text or name).lower()
        if key in seen:
            seen[key] += 1
            suffix = f" ({seen[key]})"
            notes.append(f"two columns are headed {text or name!r}: the later is called {(text or name) + suffix!r}")
            text = (text + suffix) if text else ""
            name = name + suffix
        else:
            seen[key] = 1
        columns.append(Column(j, text, name, unit))
    return columns, notes
