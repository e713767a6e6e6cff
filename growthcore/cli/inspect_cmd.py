"""``growthcore inspect FILE``: read a spreadsheet and print the import report."""

from __future__ import annotations

import argparse
import json
import sys

from growthcore.cli.import_options import add_replicates_option
from growthcore.io import load_file
from growthcore.io.loader import TIME_UNITS


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "inspect",
        help="read a spreadsheet and report what was read, what was left out and why",
        description=(
            "Read a CSV, TSV or XLSX file as the fit would, and print the import report: "
            "encoding, delimiter, header row, columns and units, series, every cell left out "
            "with its reason, and every assumption made."
        ),
    )
    parser.add_argument("file", metavar="FILE", help="CSV, TSV, TXT or XLSX file")
    parser.add_argument("--sheet", metavar="NAME", help="workbook sheet (default: the first with data)")
    parser.add_argument("--time", metavar="COL", help="time column: header, name without unit, or 1-based position")
    parser.add_argument("--value", metavar="COL", action="append",
                        help="value column (repeat for several; default: every numeric column)")
    parser.add_argument("--series", metavar="COL[,COL]",
                        help="id column(s) naming the series of a long file (default: read from the content)")
    parser.add_argument("--time-unit", metavar="U", choices=TIME_UNITS,
                        help=f"unit for elapsed time: {', '.join(TIME_UNITS)}")
    add_replicates_option(parser)
    parser.add_argument("--max-bytes", type=int, default=20_000_000, metavar="N",
                        help="refuse files larger than N bytes (default 20000000)")
    parser.add_argument("--json", action="store_true", help="print the report as JSON")
    parser.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    values = args.value
    result = load_file(
        args.file,
        sheet=args.sheet,
        time=args.time,
        value=values[0] if values and len(values) == 1 else values,
        series=args.series,
        time_unit=args.time_unit,
        replicates=args.replicates,
        max_bytes=args.max_bytes,
    )
    if args.json:
        json.dump(result.report.to_dict(), sys.stdout, indent=2, ensure_ascii=False)
        sys.stdout.write("\n")
    else:
        print(result.report.to_text())
    return 0
