"""``growthcore serve``: the exploration dashboard in a local browser tab."""

from __future__ import annotations

import argparse
import math
import os

from growthcore.errors import GrowthcoreInputError


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser("serve", help="open the exploration dashboard in a browser tab")
    p.add_argument("--data", metavar="FILE",
                   help="CSV, TSV or XLSX file to open first (default: the invented demo data)")
    p.add_argument("--port", type=int, default=8050, help="port to listen on (default 8050)")
    p.add_argument("--host", default="127.0.0.1",
                   help="address to listen on (default 127.0.0.1, this machine only; others warn that the "
                        "network can reach the app)")
    p.add_argument("--no-browser", action="store_true", help="do not open a browser tab")
    p.add_argument("--max-upload-mb", type=float, default=10.0, help="largest file that can be loaded (default 10 MB)")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    if args.data and not os.path.isfile(args.data):
        raise GrowthcoreInputError(f"--data {args.data}: no such file")
    if not 0 < args.port < 65536:
        raise GrowthcoreInputError(f"--port must be between 1 and 65535; got {args.port}")
    if not (math.isfinite(args.max_upload_mb) and args.max_upload_mb > 0):
        raise GrowthcoreInputError(f"--max-upload-mb must be a finite number above 0; got {args.max_upload_mb:g}")
    from growthcore.app.server import create_app, serve  # the dashboard loads only for this command

    app = create_app(args.data, max_upload_bytes=int(args.max_upload_mb * 1_000_000))
    try:
        serve(app, host=args.host, port=args.port, open_browser=not args.no_browser)
    except KeyboardInterrupt:
        print("growthcore serve: stopped")
    return 0
