"""Hostile inputs, made on demand (nothing large is kept in the repository), each with the outcome
it must have and a ceiling on time and peak memory.

    python tests/hostile_corpus.py DIR      # write every case's files into DIR and list them

tests/test_hostile_corpus.py runs each case as a ``growthcore`` command in a subprocess and
measures its wall time and peak resident memory there. The inputs are invented; the sizes are
those that exhausted time or memory before the limits of growthcore.limits existed.
"""

from __future__ import annotations

import io
import json
import os
import sys
import zipfile
from collections.abc import Callable
from dataclasses import dataclass, field

#: Peak memory of a growthcore command that reads a small file (Python, numpy, scipy imported),
#: measured here at about 110 MB; the ceilings below leave room above it.
BASE_MB = 150


@dataclass(frozen=True)
class Case:
    """One hostile input: how to make it, the command to run on it, and what must happen."""

    name: str
    make: Callable[[str], list[str]]  # writes the case's files into a folder; returns the command's arguments
    exit_code: int  # 0 read, 1 refused or failed with a message
    expect: str  # a regular expression the command's output (stdout + stderr) must match
    max_seconds: float = 20.0
    max_mb: float = BASE_MB + 250
    note: str = ""
    extra: dict = field(default_factory=dict)


def _write(folder: str, name: str, data: bytes | str) -> str:
    path = os.path.join(folder, name)
    with open(path, "wb") as fh:
        fh.write(data.encode("utf-8") if isinstance(data, str) else data)
    return path


def _culture(n: int) -> str:
    """Invented culture densities on a logistic path (for the cases that need real data)."""
    import math

    return "".join(f"{i},{80 / (1 + 39 * math.exp(-0.45 * i)):.6g}\n" for i in range(n))


# ------------------------------------------------------------------------------------ workbooks

def xlsx_bytes(cells: dict[tuple[int, int], object], dimension: str = "A1",
               sheet_xml: str | None = None, zeros: dict[str, int] | None = None) -> bytes:
    """A workbook whose one sheet is written by hand, cell by cell (so any dimension can be claimed)."""
    from openpyxl.utils import get_column_letter

    rows: dict[int, list[str]] = {}
    for (r, c), v in sorted(cells.items()):
        ref = f"{get_column_letter(c)}{r}"
        rows.setdefault(r, []).append(f'<c r="{ref}" t="inlineStr"><is><t>{v}</t></is></c>' if isinstance(v, str)
                                      else f'<c r="{ref}"><v>{v}</v></c>')
    body = "".join(f'<row r="{r}">{"".join(cs)}</row>' for r, cs in sorted(rows.items()))
    ns = 'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"'
    rel = 'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"'
    pkg = "http://schemas.openxmlformats.org/package/2006"
    office = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    files = {
        "[Content_Types].xml": f'<?xml version="1.0"?><Types xmlns="{pkg}/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        '<Default Extension="xml" ContentType="application/xml"/>'
        '<Override PartName="/xl/workbook.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
        '<Override PartName="/xl/worksheets/sheet1.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        "</Types>",
        "_rels/.rels": f'<?xml version="1.0"?><Relationships xmlns="{pkg}/relationships">'
        f'<Relationship Id="rId1" Type="{office}/officeDocument" Target="xl/workbook.xml"/></Relationships>',
        "xl/workbook.xml": f'<?xml version="1.0"?><workbook {ns} {rel}><sheets><sheet name="Data" sheetId="1" '
        'r:id="rId1"/></sheets></workbook>',
        "xl/_rels/workbook.xml.rels": f'<?xml version="1.0"?><Relationships xmlns="{pkg}/relationships">'
        f'<Relationship Id="rId1" Type="{office}/worksheet" Target="worksheets/sheet1.xml"/></Relationships>',
        "xl/worksheets/sheet1.xml": sheet_xml or f'<?xml version="1.0"?><worksheet {ns}><dimension ref="{dimension}"/>'
        f"<sheetData>{body}</sheetData></worksheet>",
    }
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name, text in files.items():
            z.writestr(name, text)
        for name, size in (zeros or {}).items():  # a member of ``size`` zero bytes, written in pieces
            with z.open(name, "w", force_zip64=True) as member:
                piece = bytes(1 << 20)
                for _ in range(size >> 20):
                    member.write(piece)
    return buf.getvalue()


def _culture_cells() -> dict[tuple[int, int], object]:
    import math

    cells: dict[tuple[int, int], object] = {(1, 1): "Time (h)", (1, 2): "OD"}
    for i in range(12):
        cells[(i + 2, 1)], cells[(i + 2, 2)] = i, round(80 / (1 + 39 * math.exp(-0.45 * i)), 6)
    return cells


# ------------------------------------------------------------------------------------ the cases

def _one_wide_line(fields: int) -> Callable[[str], list[str]]:
    def make(folder: str) -> list[str]:
        return ["inspect", _write(folder, f"wide_{fields}.csv", "Time (h),OD\n" + "1,2," * (fields // 2) + "\n")]
    return make


def _blank_rows(folder: str) -> list[str]:
    return ["inspect", _write(folder, "blank_rows.csv", "Time (h),OD\n" + _culture(10) + "\n" * 5_000_000)]


def _many_columns(folder: str) -> list[str]:
    head = "Time (h)," + ",".join(f"w{i}" for i in range(100_000))
    return ["inspect", _write(folder, "many_columns.csv", head + "\n" + "\n".join(
        f"{i}," + ",".join("1" for _ in range(100_000)) for i in range(3)) + "\n")]


def _long_file(folder: str) -> list[str]:
    # 1.6 M rows of two columns: under the 20 MB input limit, 3.2 M cells
    return ["fit", _write(folder, "long.csv", "Time (h),OD\n" + "1,2\n" * 1_600_000), "--out",
            os.path.join(folder, "long.json")]


def _long_series(folder: str) -> list[str]:
    return ["fit", _write(folder, "long_series.csv", "Time (h),OD\n" + "".join(
        f"{i},{1 + i * 1e-4:.6f}\n" for i in range(60_000))), "--out", os.path.join(folder, "ls.json")]


def _dimension_bomb(folder: str) -> list[str]:
    cells = _culture_cells()
    cells[(200_000, 702)] = 1  # ZZ200000
    return ["inspect", _write(folder, "dimension_bomb.xlsx", xlsx_bytes(cells, "A1:ZZ200000"))]


def _far_column(folder: str) -> list[str]:
    cells = _culture_cells()
    cells[(2, 16_384)] = 1  # XFD2, the last column a workbook can have
    return ["inspect", _write(folder, "far_column.xlsx", xlsx_bytes(cells, "A1:XFD13"))]


def _zip_bomb(folder: str) -> list[str]:
    return ["inspect", _write(folder, "zip_bomb.xlsx", xlsx_bytes(_culture_cells(), zeros={"xl/pad.bin": 400 << 20}))]


def _entity_bomb(folder: str) -> list[str]:
    lol = ('<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
           + "".join(f'<!ENTITY lol{i} "{("&lol%s;" % (i - 1 if i > 1 else "")) * 10}">' for i in range(1, 10))
           + ']><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>'
           '<row r="1"><c r="A1" t="inlineStr"><is><t>&lol9;</t></is></c></row></sheetData></worksheet>')
    return ["inspect", _write(folder, "entity_bomb.xlsx", xlsx_bytes({}, sheet_xml=lol))]


def _placeholders(folder: str) -> list[str]:
    text = "Time (h),OD\n0,nan\n1,inf\n2,1e308\n" + "".join(f"{i},{0.1 * 2 ** (i / 3):.5g}\n" for i in range(3, 20))
    return ["inspect", _write(folder, "placeholders.csv", text), "--json"]


def _nested_pattern(folder: str) -> list[str]:
    ids = ["a" * 28 + "!", "aaa", "aab"]
    text = "series,Time (h),OD\n" + "".join(f"{s},{i},{80 / (1 + 39 * 2.718281828 ** (-0.45 * i)):.6g}\n"
                                            for s in ids for i in range(12))
    return ["batch", _write(folder, "ids.csv", text), "--model", "logistic", "--series", "series",
            "--pattern", "^(a+)+$", "--out", os.path.join(folder, "ids_out.csv")]


def _capacity(value: str) -> Callable[[str], list[str]]:
    def make(folder: str) -> list[str]:
        return ["fit", _write(folder, "c.csv", "Time (h),OD\n" + _culture(24)), "--capacity", value,
                "--out", os.path.join(folder, "cap.json")]
    return make


def _forged_record(change: Callable[[dict], None], name: str) -> Callable[[str], list[str]]:
    def make(folder: str) -> list[str]:
        from growthcore.cli import main
        from growthcore.record import seal

        data = _write(folder, "c.csv", "Time (h),OD\n" + _culture(24))
        out = os.path.join(folder, "good.json")
        with open(os.devnull, "w") as quiet:
            saved = sys.stdout
            sys.stdout = quiet
            try:
                main(["fit", data, "--out", out, "--no-profile"])
            finally:
                sys.stdout = saved
        with open(out, encoding="utf-8") as fh:
            record = json.load(fh)
        change(record)
        forged = _write(folder, name, json.dumps(seal(record)))
        return ["fit", "--from-record", forged]
    return make


def _many_points(record: dict) -> None:
    pt = record["data"]["points"][-1]
    record["data"]["points"] = [dict(pt, t=float(i), row=i + 2) for i in range(400_000)]


def _bootstrap_huge(folder: str) -> list[str]:
    return ["fit", _write(folder, "c.csv", "Time (h),OD\n" + _culture(24)), "--bootstrap", "1000000"]


CASES: tuple[Case, ...] = (
    Case("one line of 500 001 fields (1 MB)", _one_wide_line(500_000), 1, r"over the limit of 4,096 columns",
         5, BASE_MB + 100),
    Case("one line of 4.75 M fields (9.5 MB)", _one_wide_line(4_750_000), 1, r"over the limit of 2,000,000 cells",
         10, BASE_MB + 200),
    Case("5 M blank rows", _blank_rows, 1, r"over the limit of 2,000,000 cells", 10, BASE_MB + 150),
    Case("100 000 columns", _many_columns, 1, r"over the limit of 4,096 columns", 10, BASE_MB + 150),
    Case("1.6 M rows under the byte limit", _long_file, 1, r"over the limit of 2,000,000 cells", 10, BASE_MB + 150),
    Case("a series of 60 000 points", _long_series, 1, r"60,000 points, over the limit of 20,000 points", 30),
    Case("dimension bomb: one cell at ZZ200000", _dimension_bomb, 0, r"points", 10, BASE_MB + 100,
         note="read: the stray cell costs one cell, not 140 M"),
    Case("a cell in column XFD", _far_column, 1, r"column 16,384 .*over the limit of 4,096 columns", 10),
    Case("zip bomb: 400 MB of zeros in the workbook", _zip_bomb, 1, r"possible zip bomb", 10),
    Case("entity expansion in the sheet XML", _entity_bomb, 1, r"(damaged|cannot be read)", 10),
    Case("nan, inf and 1e308 at the start of a series", _placeholders, 0, r'"header_row": 1', 10),
    Case("^(a+)+$ against a x 28 + '!'", _nested_pattern, 0, r"do not match the pattern", 30,
         note="re backtracks for minutes here; the linear matcher answers at once"),
    Case("--capacity nan", _capacity("nan"), 1, r"--capacity must be a finite number above 0", 10),
    Case("--capacity inf", _capacity("inf"), 1, r"--capacity must be a finite number above 0", 10),
    Case("--capacity -1", _capacity("-1"), 1, r"--capacity must be a finite number above 0", 10),
    Case("--bootstrap 1 000 000", _bootstrap_huge, 1, r"over the limit of 10,000 resamples", 10),
    Case("re-hashed record asking for 2e7 resamples",
         _forged_record(lambda r: r["settings"].update(bootstrap=20_000_000), "resamples.json"), 1,
         r"over the limit of 10,000 resamples", 20),
    Case("re-hashed record asking for a 5e8-step forecast",
         _forged_record(lambda r: r["settings"].update(forecast_steps=500_000_000), "steps.json"), 1,
         r"over the limit of 10,000 steps", 20),
    Case("re-hashed record of 400 000 points", _forged_record(_many_points, "points.json"), 1,
         r"400,000 points, over the limit of 20,000 points", 60, BASE_MB + 900,
         note="the 40 MB record is parsed (and refused) under the record size limit"),
)


def main(argv: list[str]) -> int:
    if len(argv) != 1:
        print(__doc__.strip().splitlines()[2].strip())
        return 2
    folder = argv[0]
    os.makedirs(folder, exist_ok=True)
    for i, case in enumerate(CASES):
        sub = os.path.join(folder, f"case{i:02d}")
        os.makedirs(sub, exist_ok=True)
        args = case.make(sub)
        print(f"{case.name}: growthcore {' '.join(args)}  -> exit {case.exit_code}, /{case.expect}/, "
              f"<= {case.max_seconds:g} s, <= {case.max_mb:g} MB")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
