"""Plate well ids (A1 … H12, A1 … P24): which series sit where on a 96- or 384-well plate."""

from __future__ import annotations

import re
from collections.abc import Sequence

_WELL = re.compile(r"^\s*([A-Pa-p])\s*0*([1-9][0-9]?)\s*$")
#: (rows, columns) of the plate formats recognised.
PLATES: tuple[tuple[int, int], ...] = ((8, 12), (16, 24))


def parse_well(name: str) -> tuple[int, int] | None:
    """(row, column), both 0-based, for ids such as ``A1``, ``b07`` or ``P24``; None otherwise."""
    m = _WELL.match(name)
    if not m:
        return None
    row = ord(m.group(1).upper()) - ord("A")
    col = int(m.group(2)) - 1
    return (row, col) if col < 24 else None


def well_name(row: int, col: int) -> str:
    return f"{chr(ord('A') + row)}{col + 1}"


def plate_format(names: Sequence[str]) -> tuple[int, int] | None:
    """The smallest plate (8×12 or 16×24) that holds every id, or None when an id is not a well."""
    wells = [parse_well(n) for n in names]
    if not wells or any(w is None for w in wells):
        return None
    max_row = max(w[0] for w in wells if w is not None)
    max_col = max(w[1] for w in wells if w is not None)
    for rows, cols in PLATES:
        if max_row < rows and max_col < cols:
            return rows, cols
    return None
