"""``growthcore models``: the catalogue of forms with their equations and constants."""

from __future__ import annotations

import argparse
import json
from typing import Any

from growthcore.models import catalogue
from growthcore.models.difference import CONSTANT


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("models", help="list the model forms, their equations and constants")
    p.add_argument("--json", action="store_true", help="print the catalogue as JSON")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    rows: list[dict[str, Any]] = [
        {
            "id": f.id,
            "kind": f.kind,
            "title": f.title,
            "equation": f.equation,
            "parameters": [
                {"name": s.name, "lower": s.lower, "upper": s.upper, "meaning": s.description, "unit": s.unit}
                for s in f.params
            ],
        }
        for f in catalogue()
    ]
    if args.json:
        print(json.dumps(rows, indent=2, default=str))
        return 0
    print("Difference equations (constants per step h; add '+c' to an id for a constant term c):")
    for kind in ("difference", "curve"):
        if kind == "curve":
            print("\nGrowth curves in continuous time (p0 = state at t = 0):")
        for row in (r for r in rows if r["kind"] == kind):
            print(f"  {row['id']:<20} {row['equation']}")
            for s in row["parameters"]:
                print(f"  {'':<20}   {s['name']:<7} {s['meaning']} [{s['lower']:g}, {s['upper']:g}]")
    print(f"\n  {'+c':<20} {CONSTANT.description}")
    print(f"  {'custom':<20} Δp = b1·g1(p; K) + b2·g2(p; K) + ...  with --term 'EXPR' for each g")
    print(f"  {'':<20}   EXPR uses p, K, numbers, + - * / ^, ( ), ln log10 exp sqrt abs min max")
    return 0
