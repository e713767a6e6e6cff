"""The ``growthcore`` command line. Each subcommand lives in its own module with ``register()``."""

from __future__ import annotations

import argparse
import importlib
import sys
from collections.abc import Sequence

from growthcore import __version__
from growthcore.errors import GrowthcoreInputError

#: Subcommand modules, each exposing ``register(subparsers)`` that sets ``func`` on its parser.
COMMAND_MODULES = (
    "growthcore.cli.models_cmd",
    "growthcore.cli.fit_cmd",
    "growthcore.cli.inspect_cmd",
    "growthcore.cli.serve_cmd",
    "growthcore.cli.batch_cmd",
    "growthcore.cli.report_cmd",
)


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="growthcore",
        description="Fit and examine difference-equation and growth-curve models of population data.",
    )
    parser.add_argument("--version", action="version", version=f"growthcore {__version__}")
    subparsers = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in COMMAND_MODULES:
        importlib.import_module(name).register(subparsers)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        return int(args.func(args) or 0)
    except GrowthcoreInputError as exc:
        first_line = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        print(f"growthcore {args.command}: {first_line}", file=sys.stderr)
        return 1
    except (OSError, KeyboardInterrupt) as exc:
        print(f"growthcore {args.command}: {exc}", file=sys.stderr)
        return 1
    except MemoryError:
        print(f"growthcore {args.command}: out of memory; the input asks for more work than this machine can "
              "hold (use a smaller file or fewer forms, resamples or steps)", file=sys.stderr)
        return 1
    except RecursionError:
        print(f"growthcore {args.command}: the input is nested too deeply to be read", file=sys.stderr)
        return 1
    except Exception as exc:  # a defect, not bad input: still one line, never a traceback
        first = (str(exc).splitlines() or [""])[0][:300]
        print(f"growthcore {args.command}: internal error ({type(exc).__name__}: {first}); please report it "
              "with the command that gave it", file=sys.stderr)
        return 3


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
