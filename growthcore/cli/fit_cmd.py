"""``growthcore fit``: fit one or more forms to a spreadsheet series and write the fit record.

The options make a :class:`~growthcore.workflow.Plan`; :func:`growthcore.workflow.run` carries it out.
"""

from __future__ import annotations

import argparse
import dataclasses
import json
import sys
from collections.abc import Sequence

from growthcore import workflow
from growthcore.cli import fit_export, fit_uncertainty
from growthcore.cli.import_options import add_replicates_option
from growthcore.compare import ComparisonRow, compare
from growthcore.data import Series
from growthcore.errors import ChoiceNotFound, GrowthcoreInputError, PlanError
from growthcore.fit import ERROR_MODELS, FitResult
from growthcore.io import ImportResult, load_file
from growthcore.io.writer import atomic_write_text
from growthcore.record import DataSource
from growthcore.workflow import METHOD_CHOICES, Plan

#: Modules that add options to ``fit``: the later steps of the plan, and the files written beside the record.
EXTENSIONS = (fit_uncertainty, fit_export)


def add_data_options(p: argparse.ArgumentParser) -> None:
    """The file and column options that every command reading a spreadsheet shares."""
    p.add_argument("file", nargs="?", help="CSV, TSV or XLSX file (omit with --from-record)")
    p.add_argument("--sheet", help="worksheet name (XLSX; default: the first with data)")
    p.add_argument("--time", help="time column (default: guessed)")
    p.add_argument("--value", help="value column (default: guessed)")
    p.add_argument("--series",
                   help="the series to use by name, or the id column(s) of a long file (default: the first series)")
    add_replicates_option(p)
    p.add_argument("--time-unit", choices=("min", "h", "d", "yr"), help="unit for clock and calendar times")


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("fit", help="fit model forms to a series and write the fit record")
    add_data_options(p)
    p.add_argument("--model", default="logistic", help="form id(s), comma separated (see `growthcore models`)")
    p.add_argument("--term", action="append", default=[], metavar="EXPR",
                   help="a rate term of the custom form (repeatable)")
    p.add_argument("--method", choices=METHOD_CHOICES, default="trajectory")
    p.add_argument("--capacity", type=float, metavar="K", help="fix the carrying capacity K at this estimate")
    p.add_argument("--error", choices=ERROR_MODELS, default="additive", help="error model of the trajectory method")
    p.add_argument("--no-profile", action="store_true", help="skip the profile interval for K")
    p.add_argument("--out", default="-", metavar="PATH",
                   help="where to write the record JSON ('-' for standard output)")
    for extension in EXTENSIONS:
        extension.add_options(p)
    p.set_defaults(func=run)


def _load(args: argparse.Namespace) -> tuple[ImportResult, str | None]:
    """The file read, and the series to pick: ``--series`` names id column(s) or else one series."""
    options = dict(sheet=args.sheet, time=args.time, value=args.value, time_unit=args.time_unit,
                   replicates=args.replicates)
    if args.series:
        try:
            return load_file(args.file, series=args.series, **options), None
        except ChoiceNotFound as exc:
            if exc.choice != "series":
                raise
    return load_file(args.file, **options), args.series


def pick_series(found: Sequence[Series], wanted: str | None, source: str) -> Series:
    if wanted:
        for s in found:
            if s.name == wanted:
                return s
    if wanted and len(found) > 1 and not any(s.name == wanted for s in found):
        names = ", ".join(s.name for s in found)
        raise GrowthcoreInputError(f"{source}: no series named {wanted!r}; found {names}")
    return found[0]


#: The plan's settings and the ``fit`` options that set them.
OPTION_NAMES = {"models": "--model", "method": "--method", "error": "--error", "capacity": "--capacity",
                "terms": "--term", **fit_uncertainty.OPTION_NAMES}


def plan_from_args(args: argparse.Namespace) -> Plan:
    """The plan the options ask for, refused before any work in the options' names."""
    models = tuple(m.strip() for m in args.model.split(",") if m.strip())
    try:
        plan = Plan(models=models, method=args.method, error=args.error, capacity=args.capacity,
                    terms=tuple(args.term), profile=not args.no_profile)
    except PlanError as exc:
        raise GrowthcoreInputError(exc.named(OPTION_NAMES)) from None
    return dataclasses.replace(plan, extras=fit_uncertainty.extras_from_args(args))


#: What each figure is called wherever it is printed.
METRIC_NAMES = {"r2": "R² of the states", "r2_uncentered": "uncentered R² of Δp", "aicc": "AICc"}


def metric_line(row: ComparisonRow) -> str:
    """R² under its own name (the uncentered R² of the Δp regression first for an increments fit), RMSE, ΔAICc."""
    def g(x: float | None, spec: str) -> str:
        return format(x, spec) if x is not None else "–"

    parts = []
    if row.method == "increments":
        parts.append(f"{METRIC_NAMES['r2_uncentered']} = {g(row.r2_uncentered, '.4f')}")
    parts.append(f"{METRIC_NAMES['r2']} = {g(row.r2, '.4f')}")
    parts.append(f"RMSE = {g(row.rmse, '.4g')}")
    parts.append(f"AICc = {g(row.aicc, '.2f')}")
    if row.delta_aicc is not None:
        parts.append(f"ΔAICc = {row.delta_aicc:.2f}")
    return ", ".join(parts)


def summary_lines(fits: Sequence[FitResult]) -> list[str]:
    lines = []
    for row in compare(fits):
        head = f"{row.model} ({row.method}, {row.error}): {row.status}"
        if row.status != "converged":
            lines.append(f"{head}: {row.message}")
            continue
        params = ", ".join(
            f"{n} = {d['value']:.6g}"
            + (f" ± {d['se']:.2g}" if d["se"] is not None else " (fixed)" if d["fixed"] else "")
            for n, d in row.parameters.items()
        )
        lines.append(f"{head}{f' [best AICc among {row.group}]' if row.best else ''}\n    {params}\n"
                     f"    {metric_line(row)}")
        for key, why in (row.missing or {}).items():
            if key != "r2_uncentered":
                lines.append(f"    {METRIC_NAMES.get(key, key)} –: {why}")
        for w in row.warnings:
            lines.append(f"    note: {w}")
    return lines


def run(args: argparse.Namespace) -> int:
    if getattr(args, "from_record", None):
        return fit_export.run_from_record(args)
    if not args.file:
        raise GrowthcoreInputError("give a data FILE, or --from-record RECORD.json to repeat the fits of a record")
    plan = plan_from_args(args)
    fit_export.check_artefacts_possible(args)
    imported, wanted = _load(args)
    series = pick_series(imported.series, wanted, args.file)
    report = imported.report.to_dict()
    analysis = workflow.run(series, plan, source=DataSource(report.get("source", args.file), report.get("sha256", ""),
                                                            report),
                            provenance={"replicates": args.replicates})
    fit_uncertainty.print_lines(analysis.extras, plan.extras)
    # Messages go to stderr when the record itself goes to stdout.
    fit_export.write_artefacts(args, analysis.record, out=sys.stderr if args.out == "-" else sys.stdout)
    text = json.dumps(analysis.record, indent=2, allow_nan=False)
    if args.out == "-":
        sys.stdout.write(text + "\n")
        for line in summary_lines(analysis.fits):
            print(line, file=sys.stderr)
    else:
        atomic_write_text(args.out, text + "\n")
        print(f"{series.name}: {int(series.used.sum())} points used of {len(series)}; {series.step().message}")
        for line in summary_lines(analysis.fits):
            print(line)
        print(f"record written to {args.out}")
    return 0 if analysis.success else 1
