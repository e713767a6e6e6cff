"""Import options shared by the subcommands that read a spreadsheet."""

from __future__ import annotations

import argparse

from growthcore.io.report import REPLICATE_RULES


def add_replicates_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--replicates", choices=REPLICATE_RULES, default="all",
        help="repeated times within a series: keep all points (default; the increments method then uses the "
             "mean at each time), their mean, or the first only",
    )
