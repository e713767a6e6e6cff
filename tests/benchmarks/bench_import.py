"""Import speed, measured side by side in one run (a script, not a test).

    python tests/benchmarks/bench_import.py [--rows N] [--repeats N]

An invented plate-reader export (a time column and 23 wells of plain numbers, about 4.3 MB at the
default 20 000 rows, the most points a series may have) read by growthcore's import, which also
detects the layout, parses and checks every cell, and writes the report, against pandas.read_csv,
which only parses. For
information: the ratio says what the checks cost; a 12 MB file should import in a few seconds.
"""

from __future__ import annotations

import argparse
import os
import statistics
import tempfile
import time

import numpy as np
import pandas as pd

from growthcore.io import load_file


def invented_export(path: str, rows: int) -> None:
    rng = np.random.default_rng(0)
    t = np.arange(rows) * 0.25
    wells = rng.lognormal(0.0, 1.0, (rows, 23))
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("hours," + ",".join(f"well_{i}" for i in range(1, 24)) + "\n")
        for i in range(rows):
            fh.write(f"{t[i]:.2f}," + ",".join(f"{v:.6f}" for v in wells[i]) + "\n")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=20_000)
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        path = os.path.join(folder, "invented_plate_export.csv")
        invented_export(path, args.rows)
        size = os.path.getsize(path)
        ours, theirs = [], []
        for _ in range(args.repeats):
            start = time.perf_counter()
            imported = load_file(path)
            ours.append(time.perf_counter() - start)
            start = time.perf_counter()
            pd.read_csv(path)
            theirs.append(time.perf_counter() - start)
    m_ours, m_theirs = statistics.median(ours), statistics.median(theirs)
    print(f"invented export: {size / 1e6:.1f} MB, {args.rows} rows × 24 columns, {len(imported.series)} series read")
    print(f"   growthcore import (parse, check, report)  median {m_ours:7.2f} s")
    print(f"   pandas.read_csv (parse only)              median {m_theirs:7.2f} s")
    print(f"   ratio growthcore / pandas                         {m_ours / m_theirs:7.1f}")


if __name__ == "__main__":
    main()
