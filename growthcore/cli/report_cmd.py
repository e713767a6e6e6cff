"""``growthcore report``: figures, table and HTML report from a fit record, without fitting again."""

from __future__ import annotations

import argparse
import sys

from growthcore.cli.fit_export import add_artefact_options, check_artefacts_possible, write_artefacts


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("report", help="write PNG figures, the residual CSV and an HTML report from a fit record")
    p.add_argument("record", metavar="RECORD", help="a fit record JSON written by `growthcore fit --out`")
    add_artefact_options(p)
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from growthcore.reopen import RecordError, load_record

    try:
        record = load_record(args.record)
    except RecordError as exc:
        print(f"growthcore report: {exc}", file=sys.stderr)
        return 1
    if not (args.png or args.csv or args.html):
        data = record["data"]
        print(f"{args.record}: {data.get('name', 'series')}, {len(data['points'])} points, "
              f"{len(record['fits'])} fit(s); the record is sound. Ask for --png DIR, --csv FILE or --html FILE.")
        return 0
    check_artefacts_possible(args)
    write_artefacts(args, record)
    return 0
