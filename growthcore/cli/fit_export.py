"""Options of ``growthcore fit`` for figures, tables and reports written beside the sealed record.

``--from-record`` repeats the fits of a record instead of reading a spreadsheet.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.cli import fit_uncertainty
from growthcore.data import Series
from growthcore.errors import GrowthcoreInputError
from growthcore.fit import FitResult
from growthcore.io.writer import atomic_write_text
from growthcore.workflow import extend_record


def add_artefact_options(p: argparse.ArgumentParser) -> None:
    """``--png``, ``--csv``, ``--html`` and the image size options (shared with ``report``)."""
    g = p.add_argument_group("figures, tables and report")
    g.add_argument("--png", metavar="DIR", help="write a PNG of each panel and a one-page summary sheet into DIR")
    g.add_argument("--csv", metavar="FILE", help="write times, observations, predictions and residuals of each form")
    g.add_argument("--html", metavar="FILE",
                   help="write a self-contained HTML report (opens with no server or network)")
    g.add_argument("--image-size", choices=("screen", "slide", "print"), default="screen",
                   help="PNG size: screen (960×600), slide (1920×1080 px) or print (6.5×4.5 in at 300 dpi; "
                        "the sheet is A4)")
    g.add_argument("--image-width", type=int, metavar="PX", help="panel width in layout pixels (overrides the size)")
    g.add_argument("--image-height", type=int, metavar="PX", help="panel height in layout pixels")
    g.add_argument("--image-scale", type=float, metavar="S", help="pixels per layout pixel (2 doubles the resolution)")


def add_options(p: argparse.ArgumentParser) -> None:
    """Add this module's options to the ``fit`` parser."""
    add_artefact_options(p)
    p.add_argument("--from-record", metavar="RECORD", help="repeat the fits of a fit record and report any difference "
                                                           "beyond round-off (no data FILE needed)")


def check_artefacts_possible(args: argparse.Namespace) -> None:
    """Fail before any work when PNGs are asked for and no browser can draw them."""
    if getattr(args, "png", None):
        from growthcore.report.images import NO_BROWSER, ImageExportError, find_browser

        if find_browser() is None:
            raise ImageExportError(NO_BROWSER)


def write_artefacts(args: argparse.Namespace, record: Mapping[str, Any], *, out: Any = None) -> list[str]:
    """Write the files asked for; returns one line per file group written."""
    from growthcore.report import write_html, write_pngs, write_residual_csv

    lines = []
    if getattr(args, "csv", None):
        n = write_residual_csv(record, args.csv)
        lines.append(f"residual table written to {args.csv} ({n} rows)")
    if getattr(args, "html", None):
        write_html(record, args.html)
        lines.append(f"HTML report written to {args.html}")
    if getattr(args, "png", None):
        paths = write_pngs(record, args.png, size=args.image_size, width=args.image_width,
                           height=args.image_height, scale=args.image_scale)
        lines.append(f"{len(paths)} PNG images ({args.image_size}) written to {args.png}")
    for line in lines:
        print(line, file=out or sys.stdout)
    return lines


def run_from_record(args: argparse.Namespace) -> int:
    """``fit --from-record``: check the record, refit, list differences; 0 when all numbers agree."""
    from growthcore.reopen import RTOL, RecordError, load_record, recompute

    if args.file:
        print("growthcore fit: give either a data FILE or --from-record, not both", file=sys.stderr)
        return 2
    try:
        record = load_record(args.from_record)
    except RecordError as exc:
        print(f"growthcore fit: {exc}", file=sys.stderr)
        return 1
    check_artefacts_possible(args)
    try:  # the record's settings meet the same limits as the options, before any refit
        extras = fit_uncertainty.extras_from_args(args, recorded=record.get("settings", {}))
    except GrowthcoreInputError as exc:
        print(f"growthcore fit: {args.from_record}: the record's settings: {exc}", file=sys.stderr)
        return 1

    def extend(series: Series, fits: Sequence[FitResult], new: dict[str, Any]) -> None:
        fit_uncertainty.print_lines(extend_record(new, series, fits, extras), extras)

    result = recompute(record, name=args.from_record, extend=extend)
    n = len(result.fits)
    if result.reproduced:
        print(f"{args.from_record}: {n} fit(s) recomputed; every number agrees within a relative {RTOL:g}")
    else:
        print(f"{args.from_record}: {n} fit(s) recomputed; {len(result.differences)} number(s) differ "
              f"beyond a relative {RTOL:g}:")
        for d in result.differences:
            print(f"  {d}")
    for where in result.not_recomputed:
        print(f"  not recomputed: {where}")
    if args.out != "-":
        atomic_write_text(args.out, json.dumps(result.record, indent=2, allow_nan=False) + "\n")
        print(f"recomputed record written to {args.out}")
    write_artefacts(args, record)
    return 0 if result.reproduced else 1
