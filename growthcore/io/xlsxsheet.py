"""XLSX workbooks through openpyxl: cached cell values, after checks that make parsing safe."""

from __future__ import annotations

import io
import warnings
import zipfile
from typing import Any

from growthcore.errors import ImportFailure
from growthcore.io.table import Table

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
        raise ImportFailure(f"{filename}: the workbook is damaged: not a readable zip archive ({_short(exc)})") from None
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
            return openpyxl.load_workbook(io.BytesIO(data), data_only=data_only, read_only=False)
    except Exception as exc:  # openpyxl raises many types on malformed parts
        raise ImportFailure(
            f"{filename}: the workbook is damaged or not one that can be read ({type(exc).__name__}: {_short(exc)})"
        ) from None


def read_xlsx_table(data: bytes, filename: str, sheet: str | None, max_unpacked: int) -> Table:
    """The cells of one sheet (cached results of formulas, not the formulas)."""
    check_archive(data, filename, max_unpacked)
    book = _load(data, filename, data_only=True)
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
            raise ImportFailure(f"{filename}: no sheet named {sheet!r}; the sheets are {names}")
    else:
        chosen = next((s for s in sheets if _has_data(s)), None)
        if chosen is None:
            raise ImportFailure(f"{filename}: every sheet of the workbook is empty")
        if len(sheets) > 1:
            others = ", ".join(repr(s.title) for s in sheets if s is not chosen)
            notes.append(f"sheet {chosen.title!r} read (the first with data); other sheets: {others}")
    try:
        rows = [list(r) for r in chosen.iter_rows(min_row=1, min_col=1, values_only=True)]
        merged = [str(r) for r in chosen.merged_cells.ranges]
    except Exception as exc:
        raise ImportFailure(f"{filename}: sheet {chosen.title!r} cannot be read ({_short(exc)})") from None
    if merged:
        shown = ", ".join(merged[:5]) + (" ..." if len(merged) > 5 else "")
        notes.append(f"merged cells ({shown}): each is read as one value in its top-left cell")
    rows = [[_clean(v) for v in r] for r in rows]
    formulas: dict[str, Any] = {}

    def formula_at(row: int, col: int) -> str | None:
        # Loaded only when a blank cell needs explaining: a formula never computed has no result.
        if "sheet" not in formulas:
            try:
                formulas["sheet"] = _load(data, filename, data_only=False)[chosen.title]
            except ImportFailure:
                formulas["sheet"] = None
        ws = formulas["sheet"]
        if ws is None:
            return None
        value = ws.cell(row=row, column=col + 1).value
        text = getattr(value, "text", value)
        return text if isinstance(text, str) and text.startswith("=") else None

    return Table(
        rows=rows,
        row_numbers=list(range(1, len(rows) + 1)),
        format="xlsx",
        sheet=chosen.title,
        notes=notes,
        formula_at=formula_at,
    )


def _has_data(ws: Any) -> bool:
    try:
        return any(v is not None for row in ws.iter_rows(values_only=True) for v in row)
    except Exception:
        return False


def _clean(value: object) -> object:
    if isinstance(value, str):
        return value.strip() or None
    return value
