"""Reading a spreadsheet into series: the one entry point for files and uploads."""

from __future__ import annotations

import hashlib
import math
import os
from collections.abc import Sequence
from dataclasses import dataclass
from typing import BinaryIO, NamedTuple

import numpy as np

from growthcore.data import Series
from growthcore.errors import ImportFailure
from growthcore.io.headers import Column, find_header, make_columns
from growthcore.io.layout import Layout, choose_layout, profile_columns
from growthcore.io.numbers import (
    NumberFormat,
    detect_number_format,
    is_missing,
    parse_number,
    parse_plain_number,
    plain_number_column,
    thousands_separator,
)
from growthcore.io.report import REPLICATE_RULES, ImportReport, ImportResult, LeftOut, SeriesSummary
from growthcore.io.roles import cell_key
from growthcore.io.sniff import decode_text, detect_format
from growthcore.io.table import Table
from growthcore.io.textsheet import read_text_table
from growthcore.io.timeparse import UNIT_SECONDS, convert_time_column, midnight_wraps
from growthcore.io.xlsxsheet import read_xlsx_table
from growthcore.limits import DEFAULT, Limits

#: Fewest usable points a series needs for any fit.
MIN_POINTS = 3
DEFAULT_MAX_BYTES = DEFAULT.max_bytes
#: Most left-out cells, notes and per-series rows listed in a report (the counts stay whole), so
#: that the report of any accepted file fits in a record.
MAX_LISTED = 10_000
MAX_NOTES = 1_000
TIME_UNITS = ("s", "min", "h", "d", "wk", "yr")


def load_file(
    path: str | os.PathLike[str],
    *,
    sheet: str | None = None,
    time: str | None = None,
    value: str | Sequence[str] | None = None,
    series: str | None = None,
    time_unit: str | None = None,
    replicates: str = "all",
    max_bytes: int = DEFAULT_MAX_BYTES,
    limits: Limits = DEFAULT,
) -> ImportResult:
    """Read a CSV, TSV or XLSX file into series with a full import report.

    ``series`` names the id column(s) of a long file (comma separated, or a sequence); by default
    every column's role is read from the content. ``replicates`` says how repeated times within a
    series are read: ``all`` (every point, the default), ``mean`` or ``first``.
    Raises ImportFailure (one line, naming the file) when nothing usable can be read, or when
    the file is over a limit of ``limits`` (cells, columns, points, series).
    """
    name, data = read_file(path, max_bytes)
    return load_bytes(
        data, name, sheet=sheet, time=time, value=value, series=series, time_unit=time_unit,
        replicates=replicates, max_bytes=max_bytes, limits=limits,
    )


def read_file(path: str | os.PathLike[str], max_bytes: int = DEFAULT_MAX_BYTES) -> tuple[str, bytes]:
    """The file's name and bytes; ImportFailure (naming it) when it is missing, unreadable or too large."""
    name = os.path.basename(os.fspath(path))
    try:
        size = os.path.getsize(path)
    except OSError as exc:
        raise ImportFailure(f"{name}: cannot be opened ({exc.strerror or exc})") from None
    _check_size(size, name, max_bytes)
    try:
        with open(path, "rb") as fh:
            return name, _read_at_most(fh, max_bytes + 1)
    except OSError as exc:
        raise ImportFailure(f"{name}: cannot be read ({exc.strerror or exc})") from None


def _read_at_most(fh: BinaryIO, limit: int) -> bytes:
    """Up to ``limit`` bytes of ``fh``, in pieces: memory follows what the file holds, not the limit
    (``read(limit)`` sets aside ``limit`` bytes at once, however small the file)."""
    pieces: list[bytes] = []
    got = 0
    while got < limit:
        piece = fh.read(min(limit - got, 1 << 20))
        if not piece:
            break
        pieces.append(piece)
        got += len(piece)
    return b"".join(pieces)


def load_bytes(
    data: bytes,
    filename: str,
    *,
    sheet: str | None = None,
    time: str | None = None,
    value: str | Sequence[str] | None = None,
    series: str | Sequence[str] | None = None,
    time_unit: str | None = None,
    replicates: str = "all",
    max_bytes: int = DEFAULT_MAX_BYTES,
    limits: Limits = DEFAULT,
) -> ImportResult:
    """Read a file's bytes (an upload); ``filename`` picks the format and names it in messages."""
    name = os.path.basename(filename) or "upload"
    if time_unit is not None and time_unit not in TIME_UNITS:
        raise ImportFailure(f"{name}: time unit must be one of {', '.join(TIME_UNITS)}; got {time_unit!r}")
    if replicates not in REPLICATE_RULES:
        raise ImportFailure(f"{name}: replicates must be one of {', '.join(REPLICATE_RULES)}; got {replicates!r}")
    _check_size(len(data), name, max_bytes)
    kind = detect_format(data, name)
    if kind == "xlsx":
        table = read_xlsx_table(data, name, sheet, max_unpacked=max(10 * max_bytes, 50_000_000), limits=limits)
    else:
        text, encoding, notes = decode_text(data, name)
        if not text.strip():
            raise ImportFailure(f"{name}: the file holds no text (only blanks)")
        table = read_text_table(text, name, encoding, limits)
        table.notes[:0] = notes
        if sheet is not None:
            table.notes.append(f"sheet {sheet!r} ignored: a text file has no sheets")
    builder = _Builder(table, name, replicates, limits)
    return builder.build(
        sha256=hashlib.sha256(data).hexdigest(), size=len(data), time=time, value=value,
        series=series, time_unit=time_unit,
    )


def _check_size(size: int, name: str, max_bytes: int) -> None:
    if size == 0:
        raise ImportFailure(f"{name}: the file is empty")
    if size > max_bytes:
        raise ImportFailure(
            f"{name}: the file is {size:,} bytes, over the limit of {max_bytes:,} bytes; "
            "split it or raise the limit"
        )


@dataclass
class _Point:
    row: int
    t: float
    p: float
    cell: object = None  # the cell as read, labelled only when a message needs it

    @property
    def raw(self) -> str:
        return "" if self.cell is None else _label(self.cell)


class _Builder:
    """Turns a table of cells into series, collecting everything the report must say."""

    def __init__(self, table: Table, name: str, replicates: str, limits: Limits = DEFAULT) -> None:
        self.limits = limits
        self.table = table
        self.name = name
        self.replicates = replicates
        self.left_out: list[LeftOut] = []
        self.notes: list[str] = list(table.notes)
        self.not_read: list[tuple[str, str]] = []

    def build(
        self,
        *,
        sha256: str,
        size: int,
        time: str | None,
        value: str | Sequence[str] | None,
        series: str | Sequence[str] | None,
        time_unit: str | None,
    ) -> ImportResult:
        t = self.table
        strings = [c for r in t.rows[:5000] for c in r if isinstance(c, str)]
        fmt = detect_number_format(strings, t.delimiter if t.format == "csv" else None)
        fmt = NumberFormat(fmt.decimal, thousands_separator(strings, fmt))
        if fmt.decimal == ",":
            self.notes.append("decimal comma: numbers such as 1,25 read as 1.25")
        if fmt.thousands:
            sep = {" ": "space", "\u00a0": "no-break space", "\u202f": "narrow space"}.get(
                fmt.thousands, repr(fmt.thousands))
            self.notes.append(f"thousands separator {sep} in numbers such as 1{fmt.thousands}250")
        guess = find_header(t.rows, fmt)
        if guess is None:
            raise ImportFailure(
                f"{self.name}: no numeric time and value columns found (no row has numbers, clock "
                "times or dates in two or more cells)"
            )
        header_row = t.row_numbers[guess.header] if guess.header is not None else None
        first = guess.header if guess.header is not None else guess.data_start
        skipped_above = [t.row_numbers[i] for i in range(first) if any(c is not None for c in t.rows[i])]
        if skipped_above:
            self.notes.append(f"{len(skipped_above)} line(s) above the header skipped (rows {_ranges(skipped_above)})")
        if guess.header is None:
            self.notes.append("no header row found: columns are named by position (column 1, column 2, ...)")
        if guess.units is not None:
            self.notes.append(f"row {t.row_numbers[guess.units]} read as the units of the columns")
        columns, col_notes = make_columns(t.rows, guess, t.width)
        self.notes.extend(col_notes)
        data_idx = [i for i in range(guess.data_start, len(t.rows))]
        blank_rows = [t.row_numbers[i] for i in data_idx if all(c is None for c in t.rows[i])]
        data_idx = [i for i in data_idx if any(c is not None for c in t.rows[i])]
        if blank_rows:
            self.notes.append(f"{len(blank_rows)} blank row(s) skipped (rows {_ranges(blank_rows)})")
        rows = [t.rows[i] for i in data_idx]
        rownums = [t.row_numbers[i] for i in data_idx]
        profiles = profile_columns(columns, rows, fmt)
        layout = choose_layout(profiles, rows, fmt, self.name, time=time, value=value, series=series)
        self.notes.extend(layout.notes)

        tcol = layout.time
        tcells = _column(rows, tcol.index)
        conv = convert_time_column(
            tcells, fmt, column=tcol.label, header_unit=tcol.unit or None, time_unit=time_unit
        )
        self.notes.extend(conv.notes)
        bad_time_rows: set[int] = set()
        for i, (tv, why) in enumerate(zip(conv.values, conv.reasons, strict=True)):
            if tv is None:
                bad_time_rows.add(i)
                self._leave_out(rownums[i], tcol, tcells[i], why, data_idx[i])

        self._note_padded_values(layout.conditions, rows, rownums, data_idx)
        groups: list[tuple[str, Column, list[_Point] | _Columns, tuple[tuple[str, str], ...]]] = []
        if layout.ids:
            row_ids = [self._id_of(layout, r) for r in rows]
            conditions = self._conditions(layout, rows, row_ids)
            for vcol in layout.values:
                named = self._by_id(layout, vcol, rows, row_ids, rownums, data_idx, conv.values, bad_time_rows, fmt)
                for key, points in named.items():
                    sname = key if len(layout.values) == 1 else f"{key} · {vcol.label}"
                    groups.append((sname, vcol, points, conditions.get(key, ())))
        else:
            shared = self._conditions(layout, rows, [""] * len(rows)).get("", ())
            times = conv.values
            for vcol in layout.values:
                cells = _column(rows, vcol.index)
                quick = plain_number_column(cells) if fmt.decimal == "." else None
                if quick is not None and not bad_time_rows:  # the clean case, without per-cell checks
                    pts: list[_Point] | _Columns = _Columns(rownums, times, quick, cells)  # type: ignore[arg-type]
                else:
                    pts = []
                    for i, cell in enumerate(cells):
                        if i in bad_time_rows:
                            continue
                        pv = quick[i] if quick is not None else self._value(cell, i, vcol, fmt, rownums, data_idx)
                        if pv is not None:
                            pts.append(_Point(rownums[i], times[i], pv, cell))  # type: ignore[arg-type]
                groups.append((vcol.name, vcol, pts, shared))
            for c in layout.empty:
                self.not_read.append((c.name, f"column {c.label!r} holds no values"))
                self.notes.append(f"series {c.name!r} not read: column {c.label!r} holds no values")

        if len(groups) > self.limits.max_series:
            raise ImportFailure(
                f"{self.name}: the file holds {len(groups):,} series, over the limit of {self.limits.max_series:,} "
                "series: refused (split the file)"
            )
        out_series: list[Series] = []
        summaries: list[SeriesSummary] = []
        for sname, vcol, pts, conds in groups:
            made = self._series(sname, vcol, tcol, conv.unit, pts, clock=conv.kind == "duration", conditions=conds)
            if made is not None:
                out_series.append(made[0])
                summaries.append(made[1])
        if not out_series:
            counts = ", ".join(f"{g[0]!r}: {_points(g[2])}" for g in groups[:5])
            first_bad = next((x for x in self.left_out if x.reason), None)
            why = (f"; first left out: row {first_bad.row}, column {first_bad.column!r}: {first_bad.reason}"
                   if first_bad else "")
            raise ImportFailure(
                f"{self.name}: too few usable points for any fit (at least {MIN_POINTS} needed; "
                f"usable {counts}){why}"
            )
        report = ImportReport(
            source=self.name,
            sha256=sha256,
            size_bytes=size,
            format=t.format,
            encoding=t.encoding,
            delimiter=t.delimiter,
            decimal=fmt.decimal,
            thousands=fmt.thousands,
            sheet=t.sheet,
            header_row=header_row,
            layout=layout.layout,
            rows_read=len(rows),
            series=tuple(summaries),
            left_out=self._listed_left_out(),
            notes=self._listed_notes(),
            columns=tuple(c.label for c in columns),
            not_read=tuple(self.not_read),
            roles=layout.roles,
            replicates=self.replicates,
        )
        return ImportResult(series=tuple(out_series), report=report)

    def _listed_left_out(self) -> tuple[LeftOut, ...]:
        ordered = sorted(self.left_out, key=lambda x: x.row if x.row is not None else 0)
        if len(ordered) > MAX_LISTED:
            self.notes.append(f"{len(ordered):,} cells left out; the first {MAX_LISTED:,} are listed")
            ordered = ordered[:MAX_LISTED]
        return tuple(ordered)

    def _listed_notes(self) -> tuple[str, ...]:
        if len(self.notes) <= MAX_NOTES:
            return tuple(self.notes)
        more = len(self.notes) - MAX_NOTES + 1
        return (*self.notes[: MAX_NOTES - 1], f"... and {more:,} more notes (the first {MAX_NOTES - 1:,} are listed)")

    def _id_of(self, layout: Layout, row: Sequence[object]) -> str | None:
        """The series name of a row of a long file (ids joined by " · "), None where an id is blank."""
        keys = [cell_key(_cell(row, c.index)) for c in layout.ids]
        if any(k is None for k in keys):
            return None
        return " · ".join(keys)  # type: ignore[arg-type]

    def _by_id(self, layout: Layout, vcol: Column, rows: Sequence[Sequence[object]], row_ids: Sequence[str | None],
               rownums: Sequence[int], data_idx: Sequence[int], times: Sequence[float | None], bad_time_rows: set[int],
               fmt: NumberFormat) -> dict[str, list[_Point]]:
        """The points of one value column of a long file, by series id (``row_ids``), in file order."""
        by_id: dict[str, list[_Point]] = {}
        padded: dict[str, list[int]] = {}  # rows where an id was written with spaces around it
        plain: set[str] = set()
        cells = _column(rows, vcol.index)
        quick = plain_number_column(cells) if fmt.decimal == "." else None
        for i, r in enumerate(rows):
            if i in bad_time_rows:
                continue
            key = row_ids[i]
            if key is None:
                blank = next(c for c in layout.ids if cell_key(_cell(r, c.index)) is None)
                self._leave_out(rownums[i], blank, _cell(r, blank.index), "blank series id", data_idx[i])
                continue
            if any((data_idx[i], c.index) in self.table.padded for c in layout.ids):
                padded.setdefault(key, []).append(rownums[i])
            else:
                plain.add(key)
            pv = quick[i] if quick is not None else self._value(cells[i], i, vcol, fmt, rownums, data_idx)
            points = by_id.setdefault(key, [])
            if pv is not None:
                points.append(_Point(rownums[i], times[i], pv, cells[i]))  # type: ignore[arg-type]
        for key, where in padded.items():
            if key in plain:
                self.notes.append(f"series id {key!r} is written with surrounding spaces in row(s) {_ranges(where)} "
                                  "and without them elsewhere: read as one series")
        return by_id

    def _note_padded_values(self, columns: Sequence[Column], rows: Sequence[Sequence[object]],
                            rownums: Sequence[int], data_idx: Sequence[int]) -> None:
        """A note for each value of a condition column written with surrounding spaces in some rows and
        without them in others: read as one value (the column may then be constant, so that rows
        the spaces told apart are read as one series)."""
        if not self.table.padded:
            return
        for c in columns:
            padded: dict[str, list[int]] = {}
            plain: set[str] = set()
            for i, r in enumerate(rows):
                key = cell_key(_cell(r, c.index))
                if key is None:
                    continue
                if (data_idx[i], c.index) in self.table.padded:
                    padded.setdefault(key, []).append(rownums[i])
                else:
                    plain.add(key)
            for key, where in padded.items():
                if key in plain:
                    self.notes.append(f"{c.label!r} value {key!r} is written with surrounding spaces in row(s) "
                                      f"{_ranges(where)} and without them elsewhere: read as one value")

    def _conditions(self, layout: Layout, rows: Sequence[Sequence[object]],
                    row_ids: Sequence[str | None]) -> dict[str, tuple[tuple[str, str], ...]]:
        """Each series' conditions and covariates (constant within it), by the series name of each row."""
        kept = (*layout.conditions, *layout.covariates)
        out: dict[str, dict[str, str]] = {}
        for r, name in zip(rows, row_ids, strict=True):
            if name is None:
                continue
            found = out.setdefault(name, {})
            for c in kept:
                if c.label not in found:
                    key = cell_key(_cell(r, c.index))
                    if key is not None:
                        found[c.label] = key
        return {name: tuple((c.label, found[c.label]) for c in kept if c.label in found) for name, found in out.items()}

    def _unwrap_midnight(self, sname: str, tcol: Column, unit: str, pts: list[_Point]) -> None:
        """Clock times of day that pass midnight: a day is added from each crossing on."""
        day = UNIT_SECONDS["d"] / UNIT_SECONDS[unit]
        wraps = midnight_wraps([p.t for p in pts], day)
        if not wraps:
            return
        added = 0.0
        crossings = set(wraps)
        for i, point in enumerate(pts):
            if i in crossings:
                added += day
            point.t += added
        rows = ", ".join(str(pts[i].row) for i in wraps)
        self.notes.append(
            f"series {sname!r}: the clock times in column {tcol.label!r} pass midnight at row(s) {rows}; "
            "read as the next day (24 h added from there on)"
        )

    def _leave_out(self, row: int, col: Column, cell: object, reason: str, index: int) -> None:
        if cell is None and self.table.formula_at is not None:
            formula = self.table.formula_at(self.table.row_numbers[index], col.index)
            if formula is not None:
                reason = (
                    f"formula {formula} has no saved result (the workbook was written by a program "
                    "that does not calculate; open and save it in a spreadsheet program)"
                )
        self.left_out.append(LeftOut(row, col.label, "" if cell is None else _label(cell), reason))

    def _value(
        self, cell: object, i: int, col: Column, fmt: NumberFormat, rownums: Sequence[int], data_idx: Sequence[int]
    ) -> float | None:
        if cell is None:
            self._leave_out(rownums[i], col, cell, "blank value", data_idx[i])
            return None
        if isinstance(cell, bool):
            self._leave_out(rownums[i], col, cell, "not a number", data_idx[i])
            return None
        if isinstance(cell, (int, float)):
            x = float(cell)
        else:
            text = str(cell)
            if fmt.decimal == ".":
                quick = parse_plain_number(text)  # most cells of most files: skip the slower checks below
                if quick is not None:
                    return quick
            if is_missing(text):
                self._leave_out(rownums[i], col, cell, "missing-value mark", data_idx[i])
                return None
            if text.startswith("#") and text.endswith(("!", "?", "A")):
                self._leave_out(rownums[i], col, cell, "spreadsheet error value", data_idx[i])
                return None
            parsed = parse_number(text, fmt)
            if parsed is None:
                self._leave_out(rownums[i], col, cell, "not a number", data_idx[i])
                return None
            x = parsed
        if not math.isfinite(x):
            self._leave_out(rownums[i], col, cell, "not a finite number", data_idx[i])
            return None
        return x

    def _series(
        self, sname: str, vcol: Column, tcol: Column, unit: str, given: list[_Point] | _Columns, *,
        clock: bool = False, conditions: tuple[tuple[str, str], ...] = (),
    ) -> tuple[Series, SeriesSummary] | None:
        if isinstance(given, _Columns):
            quick = self._clean_series(sname, vcol, tcol, unit, given, conditions)
            if quick is not None:
                return quick
            pts = [_Point(n, t, v, c)
                   for n, t, v, c in zip(given.rows, given.times, given.values, given.cells, strict=True)]
        else:
            pts = given
        if clock:
            self._unwrap_midnight(sname, tcol, unit, pts)
        order = sorted(range(len(pts)), key=lambda k: (pts[k].t, k))
        if order != list(range(len(pts))):
            k = next(j for j in range(1, len(pts)) if pts[j].t < pts[j - 1].t)
            self.notes.append(
                f"series {sname!r}: times not in order (row {pts[k].row} has t = {pts[k].t:g} after "
                f"t = {pts[k - 1].t:g}): sorted by time"
            )
            pts = [pts[j] for j in order]
        merged: list[_Point] = []
        averaged: list[tuple[int, float, int]] = []
        replicate_times = replicate_points = 0
        j = 0
        while j < len(pts):
            k = j
            while k + 1 < len(pts) and pts[k + 1].t == pts[j].t:
                k += 1
            group = pts[j : k + 1]
            j = k + 1
            if len(group) == 1:
                merged.append(group[0])
                continue
            replicate_times += 1
            replicate_points += len(group)
            if self.replicates == "mean":
                mean = float(np.mean([g.p for g in group]))
                merged.append(_Point(group[0].row, group[0].t, mean))
                averaged.append((group[0].row, group[0].t, len(group)))
            elif self.replicates == "first":
                merged.append(group[0])
                for g in group[1:]:
                    self.left_out.append(
                        LeftOut(g.row, vcol.label, g.raw or _num(g.p),
                                f"replicate at t = {g.t:g} in series {sname!r}: only the first (row {group[0].row}) "
                                "is kept, as chosen")
                    )
            else:
                merged.extend(group)
        if replicate_times:
            what = {"all": "every point kept", "mean": "averaged into one point at each time",
                    "first": "the first kept at each time, the others listed as left out"}[self.replicates]
            self.notes.append(f"series {sname!r}: {replicate_points} replicate points at {replicate_times} "
                              f"repeated time(s): {what}")
        n_times = len({g.t for g in merged})
        if n_times < MIN_POINTS:
            what = f"{len(merged)} usable point(s)"
            if n_times < len(merged):
                what += f" at {n_times} distinct time(s)"
            for g in merged:
                self.left_out.append(
                    LeftOut(g.row, vcol.label, g.raw or _num(g.p),
                            f"series {sname!r} has only {what}; at least {MIN_POINTS} times are needed")
                )
            self.notes.append(f"series {sname!r} not read: only {what}")
            self.not_read.append((sname, f"only {what}"))
            return None
        return self._made(sname, vcol, tcol, unit, np.array([g.t for g in merged]), np.array([g.p for g in merged]),
                          tuple(g.row for g in merged), tuple(averaged), conditions=conditions,
                          replicates=(replicate_times, replicate_points))

    def _clean_series(self, sname: str, vcol: Column, tcol: Column, unit: str, cols: _Columns,
                      conditions: tuple[tuple[str, str], ...]) -> tuple[Series, SeriesSummary] | None:
        """A column with every value plain and times strictly increasing, straight from arrays."""
        t, p = np.array(cols.times, dtype=float), np.array(cols.values, dtype=float)
        if t.size < MIN_POINTS or not (np.diff(t) > 0).all():
            return None  # the general path sorts, merges or refuses, and says so
        return self._made(sname, vcol, tcol, unit, t, p, tuple(cols.rows), (), conditions=conditions)

    def _made(self, sname: str, vcol: Column, tcol: Column, unit: str, t: np.ndarray, p: np.ndarray,
              rows: tuple[int, ...], averaged: tuple[tuple[int, float, int], ...], *,
              conditions: tuple[tuple[str, str], ...] = (),
              replicates: tuple[int, int] = (0, 0)) -> tuple[Series, SeriesSummary]:
        """The series and its summary, with a note on values <= 0."""
        if t.size > self.limits.max_points:
            raise ImportFailure(
                f"{self.name}: series {sname!r} has {t.size:,} points, over the limit of {self.limits.max_points:,} "
                "points: refused (thin or split the series)"
            )
        nonpos = tuple((rows[i], float(t[i]), float(p[i])) for i in np.flatnonzero(p <= 0).tolist())
        if nonpos:
            self.notes.append(
                f"series {sname!r}: {len(nonpos)} value(s) <= 0 kept (rows {_ranges([n[0] for n in nonpos])}); "
                "terms with ln need p > 0"
            )
        s = Series(t=t, p=p, name=sname, time_unit=unit, value_unit=vcol.unit, time_column=tcol.label,
                   value_column=vcol.label, rows=rows)
        per_series = 20  # the note above gives the count and the row ranges
        return s, SeriesSummary(sname, tcol.label, unit, vcol.label, vcol.unit, t.size, nonpos[:per_series],
                                averaged[:per_series], conditions, replicates[0], replicates[1], s.step().to_dict())


class _Columns(NamedTuple):
    """One value column whose every cell is a plain number, with the row numbers and times."""

    rows: Sequence[int]
    times: Sequence[float]
    values: Sequence[float]
    cells: Sequence[object]


def _points(pts: list[_Point] | _Columns) -> int:
    """Usable points of one series (a ``_Columns`` is a tuple of four columns, not of points)."""
    return len(pts.rows) if isinstance(pts, _Columns) else len(pts)


def _column(rows: Sequence[Sequence[object]], j: int) -> list[object]:
    """Column ``j`` of every row (None where a row is short)."""
    return [r[j] if j < len(r) else None for r in rows]


def _cell(row: Sequence[object], j: int) -> object:
    return row[j] if j < len(row) else None


def _label(value: object) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value).strip() if not hasattr(value, "isoformat") else str(value.isoformat())


def _num(x: float) -> str:
    return f"{x:g}"


def _ranges(rows: Sequence[int]) -> str:
    """``[3, 4, 5, 9]`` -> ``3-5, 9`` (first 10 runs)."""
    runs: list[str] = []
    start = prev = None
    for r in rows:
        if start is None:
            start = prev = r
        elif r == prev + 1:  # type: ignore[operator]
            prev = r
        else:
            runs.append(f"{start}-{prev}" if prev != start else f"{start}")
            start = prev = r
    if start is not None:
        runs.append(f"{start}-{prev}" if prev != start else f"{start}")
    return ", ".join(runs[:10]) + (" ..." if len(runs) > 10 else "")


__all__ = ["load_file", "load_bytes", "MIN_POINTS", "UNIT_SECONDS"]
