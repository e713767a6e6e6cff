"""XLSX workbooks through openpyxl: cached cell values, after checks that make parsing safe."""

from __future__ import annotations

import io
import warnings
import zipfile
from typing import Any

from growthcore.errors import ChoiceNotFound, ImportFailure
from growthcore.io.table import Table, padded_cells
from growthcore.limits import DEFAULT, Limits

#: Most members a workbook archive may have before it is refused.
MAX_MEMBERS = 10_000


def check_archive(data: bytes, filename: str, max_unpacked: int) -> None:
    """Refuse a damaged archive, or one whose members unpack beyond ``max_unpacked`` bytes.

    The sizes come from the archive's directory; Python's zip reader never inflates a member past
    its declared size, so checking them bounds the work of any later parse.
    """
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            infos = archive.infolist()
            names = {i.filename for i in infos}
    except Exception as exc:  # zipfile raises several types on damaged input
        raise ImportFailure(
            f"{filename}: the workbook is damaged: not a readable zip archive ({_short(exc)})") from None
    if len(infos) > MAX_MEMBERS:
        raise ImportFailure(f"{filename}: the archive holds {len(infos)} members: refused")
    total = sum(max(i.file_size, 0) for i in infos)
    if total > max_unpacked:
        raise ImportFailure(
            f"{filename}: the workbook would unpack to {total / 1e6:,.0f} MB, over the limit of "
            f"{max_unpacked / 1e6:,.0f} MB: refused (possible zip bomb)"
        )
    if "xl/workbook.xml" not in names:
        raise ImportFailure(f"{filename}: a zip archive but not an .xlsx workbook (it has no xl/workbook.xml)")


def _short(exc: BaseException) -> str:
    text = " ".join(str(exc).split()) or type(exc).__name__
    return text[:160]


def _load(data: bytes, filename: str, data_only: bool) -> Any:
    try:
        import openpyxl
    except ImportError:
        raise ImportFailure(f"{filename}: reading .xlsx needs the openpyxl package (pip install openpyxl)") from None

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            # read-only: the sheets stay in the archive and are walked on demand, cell by cell
            return openpyxl.load_workbook(io.BytesIO(data), data_only=data_only, read_only=True)
    except Exception as exc:  # openpyxl raises many types on malformed parts
        raise ImportFailure(
            f"{filename}: the workbook is damaged or not one that can be read ({type(exc).__name__}: {_short(exc)})"
        ) from None


class _Sheet:
    """The cells present in one sheet's XML, walked once, with the limits checked per cell.

    The sheet's declared dimension is never used: a workbook that claims (or holds a stray cell
    at) ZZ200000 costs only the cells it writes. Rows are kept ragged (each as long as its last
    filled cell) and rows absent from the file are absent here; their numbers are kept.
    """

    def __init__(self, book: Any, ws: Any, filename: str, limits: Limits, *, data_only: bool = True,
                 stop_at_first: bool = False) -> None:
        from openpyxl.worksheet._reader import WorkSheetParser
        from openpyxl.xml.functions import iterparse

        self.rows: list[list[object]] = []
        self.row_numbers: list[int] = []
        self.merged: list[str] = []
        self.formulas: dict[tuple[int, int], str] = {}
        ns = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
        cell_tag, row_tag, data_tag, merge_tag = ns + "c", ns + "row", ns + "sheetData", ns + "mergeCell"
        cells = 0
        with ws._get_source() as src:
            parser = WorkSheetParser(src, ws._shared_strings, data_only=data_only, epoch=book.epoch,
                                     date_formats=book._date_formats, timedelta_formats=book._timedelta_formats)
            current: dict[int, object] = {}
            sheet_data = None
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                for event, el in iterparse(src, events=("start", "end")):
                    tag = el.tag
                    if event == "start":
                        if tag == row_tag:
                            r = el.get("r")
                            parser.row_counter = int(float(r)) if r else parser.row_counter + 1
                            parser.col_counter = 0
                            current = {}
                        elif tag == data_tag:
                            sheet_data = el
                        continue
                    if tag == cell_tag:
                        cell = parser.parse_cell(el)
                        el.clear()
                        column = int(cell["column"])
                        if column > limits.max_columns:
                            raise ImportFailure(
                                f"{filename}: sheet {ws.title!r} has a cell in column {column:,} (row {cell['row']}), "
                                f"over the limit of {limits.max_columns:,} columns: refused"
                            )
                        value = cell["value"]
                        if cell["data_type"] == "f":
                            formula = getattr(value, "text", value)
                            if isinstance(formula, str):
                                self.formulas[(int(cell["row"]), column)] = formula
                            continue
                        if value is not None:
                            current[column] = value
                    elif tag == row_tag:
                        el.clear()
                        if sheet_data is not None:
                            sheet_data.clear()  # processed rows would otherwise stay attached to the tree
                        if not current:
                            continue
                        width = max(current)
                        cells += width
                        if cells > limits.max_cells:
                            raise ImportFailure(
                                f"{filename}: sheet {ws.title!r} holds more than {limits.max_cells:,} cells (the "
                                f"limit) by row {parser.row_counter:,}: refused (split the sheet or keep only the "
                                "columns to fit)"
                            )
                        row: list[object] = [None] * width
                        for column, value in current.items():
                            row[column - 1] = value
                        self.rows.append(row)
                        self.row_numbers.append(parser.row_counter)
                        if stop_at_first:
                            return
                    elif tag == merge_tag:
                        ref = el.get("ref")
                        if ref:
                            self.merged.append(ref)
                        el.clear()


def read_xlsx_table(data: bytes, filename: str, sheet: str | None, max_unpacked: int,
                    limits: Limits = DEFAULT) -> Table:
    """The cells of one sheet (cached results of formulas, not the formulas).

    Only cells present in the file are read; a sheet over the cell or column limit of ``limits``
    is refused as soon as the walk reaches the limit.
    """
    check_archive(data, filename, max_unpacked)
    book = _load(data, filename, data_only=True)
    try:
        return _read(book, data, filename, sheet, limits)
    except ImportFailure:
        raise
    except Exception as exc:  # damaged sheet XML surfaces from the parser with many types
        raise ImportFailure(f"{filename}: the workbook cannot be read ({type(exc).__name__}: {_short(exc)})") from None
    finally:
        book.close()


def _read(book: Any, data: bytes, filename: str, sheet: str | None, limits: Limits) -> Table:
    sheets = list(book.worksheets)
    if not sheets:
        raise ImportFailure(f"{filename}: the workbook has no worksheets")
    notes: list[str] = []
    if sheet is not None:
        chosen = next((s for s in sheets if s.title == sheet), None) or next(
            (s for s in sheets if s.title.lower() == sheet.lower()), None
        )
        if chosen is None:
            names = ", ".join(repr(s.title) for s in sheets)
            raise ChoiceNotFound(f"{filename}: no sheet named {sheet!r}; the sheets are {names}", "sheet")
    else:
        chosen = next((s for s in sheets if _has_data(book, s, filename, limits)), None)
        if chosen is None:
            raise ImportFailure(f"{filename}: every sheet of the workbook is empty")
        if len(sheets) > 1:
            others = ", ".join(repr(s.title) for s in sheets if s is not chosen)
            notes.append(f"sheet {chosen.title!r} read (the first with data); other sheets: {others}")
    walked = _Sheet(book, chosen, filename, limits)
    if walked.merged:
        shown = ", ".join(walked.merged[:5]) + (" ..." if len(walked.merged) > 5 else "")
        notes.append(f"merged cells ({shown}): each is read as one value in its top-left cell")
    rows = [[_clean(v) for v in r] for r in walked.rows]
    padded = padded_cells(walked.rows)
    formulas: dict[str, Any] = {}
    title = chosen.title

    def formula_at(row: int, col: int) -> str | None:
        # Loaded only when a blank cell needs explaining: a formula never computed has no result.
        if "cells" not in formulas:
            formulas["cells"] = {}
            try:
                again = _load(data, filename, data_only=False)
                try:
                    formulas["cells"] = _Sheet(again, again[title], filename, limits, data_only=False).formulas
                finally:
                    again.close()
            except Exception:  # the explanation is optional; the cell is reported blank either way
                pass
        return formulas["cells"].get((row, col + 1))

    return Table(
        rows=rows,
        row_numbers=walked.row_numbers,
        format="xlsx",
        sheet=title,
        notes=notes,
        formula_at=formula_at,
        padded=padded,
    )


def _has_data(book: Any, ws: Any, filename: str, limits: Limits) -> bool:
    try:
        return bool(_Sheet(book, ws, filename, limits, stop_at_first=True).rows)
    except ImportFailure:
        return True  # it has cells; reading it will give the refusal
    except Exception:
        return False


def _clean(value: object) -> object:
    if isinstance(value, str):
        return value.strip() or None
    return value
