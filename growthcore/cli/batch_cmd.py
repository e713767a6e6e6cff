"""``growthcore batch``: fit chosen forms to every series of a file, one table row per series and form."""

from __future__ import annotations

import argparse
import json
import sys
import time
from typing import IO, Any

from growthcore.batch import fit_batch, group_summary, load_batch, rows
from growthcore.batch.ftest import difference_test_for_batch
from growthcore.cli.batch_population import population_options, population_section
from growthcore.cli.import_options import add_replicates_option
from growthcore.errors import GrowthcoreInputError
from growthcore.fit.result import ERROR_MODELS, METHODS
from growthcore.io.writer import atomic_write_text, write_csv

#: Failed rows listed on the terminal; the output file has all of them.
MAX_LISTED = 20


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("batch", help="fit forms to every series of a file (replicates, plates)")
    p.add_argument("file", help="CSV, TSV or XLSX file with many series (long with a series column, or wide)")
    p.add_argument("--sheet", help="worksheet name (XLSX; default: the first with data)")
    p.add_argument("--time", help="time column (default: guessed)")
    p.add_argument("--value", help="value column (default: guessed)")
    p.add_argument("--series", metavar="COL[,COL]", help="id column(s) of a long file (default: read from the content)")
    add_replicates_option(p)
    p.add_argument("--time-unit", choices=("min", "h", "d", "yr"), help="unit for clock and calendar times")
    p.add_argument("--model", required=True, help="form id(s), comma separated (see `growthcore models`)")
    p.add_argument("--method", choices=METHODS, default="trajectory")
    p.add_argument("--error", choices=ERROR_MODELS, default="additive", help="error model of the trajectory method")
    where = p.add_mutually_exclusive_group()
    where.add_argument("--groups", metavar="COL[,COL]",
                       help="condition column(s) that put series in replicate groups (Year,Variety)")
    where.add_argument("--pattern", metavar="REGEX",
                       help="regular expression on the series ids; its first group (or (?P<group>...)) is the group")
    p.add_argument("--test", metavar="PARAM", help="F test of whether the groups differ in this constant (JSON output)")
    p.add_argument("--engine", choices=("local", "dask"), default="local")
    p.add_argument("--scheduler", metavar="ADDRESS", help="Dask scheduler address, e.g. tcp://10.0.0.5:8786")
    p.add_argument("--workers", type=int, metavar="N", help="worker processes (default: all cores)")
    p.add_argument("--chunk-size", type=int, default=None, metavar="N", help="series per task (default 128)")
    p.add_argument("--out", required=True, metavar="PATH", help="results.csv or results.json")
    population_options(p)
    p.set_defaults(func=run)


class _Bar:
    """A one-line progress bar on a terminal's standard error; silent elsewhere."""

    def __init__(self, stream: IO[str]) -> None:
        self.stream = stream
        self.on = bool(getattr(stream, "isatty", lambda: False)())
        self.start = time.monotonic()

    def __call__(self, done: int, total: int) -> None:
        if not self.on:
            return
        width = 30
        filled = int(width * done / max(total, 1))
        elapsed = time.monotonic() - self.start
        self.stream.write(f"\r[{'#' * filled}{'.' * (width - filled)}] {done}/{total} tasks, {elapsed:.1f} s")
        if done >= total:
            self.stream.write("\n")
        self.stream.flush()


def run(args: argparse.Namespace) -> int:
    out = str(args.out)
    kind = "json" if out.lower().endswith(".json") else "csv" if out.lower().endswith(".csv") else None
    if kind is None:
        raise GrowthcoreInputError(f"--out must end in .csv or .json; got {out!r}")
    if args.scheduler and args.engine != "dask":
        raise GrowthcoreInputError("--scheduler needs --engine dask")
    if args.test and not (args.groups or args.pattern):
        raise GrowthcoreInputError("--test needs replicate groups: give --groups COL or --pattern REGEX")
    if args.random and kind != "json":
        raise GrowthcoreInputError(f"--random writes a population object: --out must end in .json; got {out!r}")
    data = load_batch(args.file, sheet=args.sheet, time=args.time, value=args.value, series=args.series,
                      time_unit=args.time_unit, replicates=args.replicates, groups=args.groups, pattern=args.pattern)
    models = [m.strip() for m in args.model.split(",") if m.strip()]
    extra: dict[str, Any] = {}
    if args.chunk_size is not None:
        extra["chunk_size"] = args.chunk_size
    started = time.monotonic()
    batch = fit_batch(data, models, method=args.method, error=args.error, engine=args.engine,
                      workers=args.workers, scheduler=args.scheduler, progress=_Bar(sys.stderr), **extra)
    seconds = time.monotonic() - started
    header, body = rows(batch)
    if kind == "csv":
        write_csv(out, header, ([r.get(h) for h in header] for r in body))
    else:
        doc: dict[str, Any] = {
            "source": data.source,
            "import": data.report.to_dict() if data.report is not None else None,
            "settings": {"models": list(batch.models), "method": batch.method, "error": batch.error,
                         "engine": batch.engine, "groups": args.groups, "pattern": args.pattern,
                         "replicates": args.replicates},
            "notes": list(data.notes),
            "columns": header,
            "rows": body,
        }
        if data.groups:
            doc["groups"] = {"members": data.members(),
                             "summary": [s.to_dict() for s in group_summary(batch)]}
            if args.test:
                doc["groups"]["tests"] = [difference_test_for_batch(batch, m, args.test).to_dict()
                                          for m in batch.models]
        if args.random:
            doc["population"] = population_section(args, data, models)
        atomic_write_text(out, json.dumps(doc, indent=2, allow_nan=False) + "\n")
    n_failed = sum(1 for r in body if r["status"] != "converged")
    unread = f" (and {len(data.not_read)} not read)" if data.not_read else ""
    print(f"{len(data.series)} series{unread} x {len(batch.models)} form(s): {len(body) - n_failed} converged, "
          f"{n_failed} failed, in {seconds:.2f} s ({batch.engine} engine)")
    for note in data.notes:
        print(f"note: {note}")
    failures = [r for r in body if r["status"] != "converged"]
    for r in failures[:MAX_LISTED]:
        print(f"  {r['series']} / {r['model']}: {r['message']}")
    if len(failures) > MAX_LISTED:
        print(f"  ... and {len(failures) - MAX_LISTED} more (see the status column)")
    if kind == "json" and args.random:
        pop = doc["population"]
        print(f"population ({pop['estimation']}, random {', '.join(pop['random'])}): {pop['status']}"
              + (f", log-likelihood {pop['loglik']:.6g}" if pop["status"] == "converged" else f": {pop['message']}"))
    print(f"results written to {out}")
    if kind == "json" and args.random and doc["population"]["status"] != "converged":
        return 1
    return 0 if n_failed < len(body) else 1
