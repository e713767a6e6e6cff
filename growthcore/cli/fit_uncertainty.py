"""Options of ``growthcore fit`` for bootstrap intervals, dynamics and forecasts: the plan's
:class:`~growthcore.workflow.Extras`.

Every converged fit gains ``dynamics`` (equilibria, long run, sentences); with ``--bootstrap`` each
free constant gains ``ci95_bootstrap`` and the fit a ``bootstrap`` summary and ``derived_intervals``;
with ``--forecast`` or ``--forecast-span`` the fit gains ``forecast`` points and ``forecast_notes``
(see :mod:`growthcore.workflow`).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Mapping, Sequence
from typing import Any

from growthcore.errors import GrowthcoreInputError, PlanError
from growthcore.uncertainty import DEFAULT_RESAMPLES, DEFAULT_SEED, FORECAST_CAUTION
from growthcore.workflow import Extras, FitExtras


def add_options(p: argparse.ArgumentParser) -> None:
    """Add this module's options to the ``fit`` parser."""
    g = p.add_argument_group("uncertainty, dynamics and forecast")
    g.add_argument("--bootstrap", nargs="?", type=int, const=DEFAULT_RESAMPLES, default=None, metavar="N",
                   help=f"bootstrap intervals from N residual resamples (default N: {DEFAULT_RESAMPLES})")
    g.add_argument("--seed", type=int, default=DEFAULT_SEED, metavar="S",
                   help="seed of the resampling (default %(default)s)")
    g.add_argument("--forecast", type=int, metavar="STEPS", help="forecast STEPS steps past the last observation")
    g.add_argument("--forecast-span", type=float, metavar="T", help="forecast a time span T past the last observation")
    g.add_argument("--bound", type=float, metavar="B",
                   help="plausibility bound on the state: report when the forecast passes it")
    g.add_argument("--level", type=float, action="append", default=[], metavar="P",
                   help="report the time to reach state P, with its interval (repeatable)")


#: The record's settings of the later steps and the ``fit`` options that set them.
OPTION_NAMES = {"bootstrap": "--bootstrap", "seed": "--seed", "forecast_steps": "--forecast",
                "forecast_span": "--forecast-span", "bound": "--bound", "levels": "--level"}


def extras_from_args(args: argparse.Namespace, *, recorded: Mapping[str, Any] | None = None) -> Extras:
    """The later steps the options ask for; with ``recorded`` (a record's settings), those it names.

    A choice out of range is refused before any work, in the options' names.
    """
    given = {"bootstrap": args.bootstrap, "seed": args.seed, "forecast_steps": args.forecast,
             "forecast_span": args.forecast_span, "bound": args.bound, "levels": tuple(args.level)}
    try:
        return Extras.from_settings(recorded or {}, base=given)
    except PlanError as exc:
        raise GrowthcoreInputError(exc.named(OPTION_NAMES)) from None


def print_lines(found: Sequence[FitExtras], extras: Extras) -> None:
    """The plain sentences of the later steps, and the caution with a forecast, on standard error."""
    for one in found:
        for line in one.lines:
            print(line, file=sys.stderr)
    if extras.forecasting:
        print(f"caution: {FORECAST_CAUTION}", file=sys.stderr)
