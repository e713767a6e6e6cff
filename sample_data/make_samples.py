"""Write the invented demo data sets in this folder. Deterministic: run it again, get the same files.

    python sample_data/make_samples.py

Every curve comes from a difference equation or growth curve written out below, plus seeded
noise. None of the numbers are measurements.
"""

from __future__ import annotations

import datetime as dt
import os
import sys
import zipfile

import numpy as np
import pandas as pd

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 20240611
FIXED_TIME = dt.datetime(2024, 6, 11, 12, 0, 0)


def algae_photobioreactor(rng: np.random.Generator) -> pd.DataFrame:
    """Dry weight of an algal culture, sampled every 12 h for 19.5 days (40 samples).

    Discrete logistic with a 12 h step: p[n+1] = p[n] + r p[n] (1 - p[n]/K), r = 0.17 per step,
    K = 4.2 g/L, p[0] = 0.15 g/L; each sample carries 3 % multiplicative noise.
    """
    r, k, p = 0.17, 4.2, 0.15
    values = []
    for _ in range(40):
        values.append(p)
        p = p + r * p * (1.0 - p / k)
    observed = np.array(values) * np.exp(rng.normal(0.0, 0.03, size=40))
    return pd.DataFrame({"Time (h)": np.arange(40) * 12, "Dry weight (g/L)": np.round(observed, 3)})


def island_census(rng: np.random.Generator) -> pd.DataFrame:
    """Annual census of an invented ground bird on an island, founded by 14 birds in 1994.

    Ricker map: N[t+1] = N[t] exp(r (1 - N[t]/K)), r = 1.5, K = 460, with 6 % year-to-year
    environmental noise; r between 1 and 2 gives the overshoot and damped settling.
    """
    r, k, n = 1.5, 460.0, 14.0
    counts = []
    for _ in range(30):
        counts.append(n)
        n = n * np.exp(r * (1.0 - n / k) + rng.normal(0.0, 0.06))
    return pd.DataFrame({"Year": np.arange(1994, 2024), "Birds counted": np.rint(counts).astype(int)})


def plate_reader(rng: np.random.Generator) -> pd.DataFrame:
    """Optical density at 600 nm in 12 wells (A1..A12), read every 15 min for 26 h.

    Each well follows a Gompertz curve above a medium background of 0.085:
    OD(t) = 0.085 + A exp(-exp(mu e (lag - t) / A + 1)) (Zwietering's form), with the rate mu
    falling and the lag growing from well A1 to A12 as if along a gradient of an inhibitor;
    reading noise 0.004.
    """
    t_h = np.arange(0, 26 * 4 + 1) * 0.25
    frame: dict[str, object] = {"Time": [_clock(x) for x in t_h]}
    for j in range(12):
        a = 1.15 - 0.03 * j
        mu = 0.42 * (1.0 - j / 14.0)
        lag = 2.5 + 0.35 * j
        od = 0.085 + a * np.exp(-np.exp(mu * np.e * (lag - t_h) / a + 1.0))
        od = od + rng.normal(0.0, 0.004, size=t_h.size)
        frame[f"A{j + 1}"] = np.round(od, 4)
    return pd.DataFrame(frame)


def reactor_replicates(rng: np.random.Generator) -> pd.DataFrame:
    """Three replicate reactors in long layout, sampled every 6 h across a clock change.

    Stamps are local date-times with their UTC offset (+01:00 before 2024-03-31 02:00, +02:00
    after), so the elapsed time stays right across the change. Each reactor follows the
    logistic curve p(t) = K / (1 + (K/p0 - 1) exp(-r t)) with its own r; 4 % noise.
    """
    start = dt.datetime(2024, 3, 28, 8, 0, tzinfo=dt.timezone.utc)
    rows = []
    for reactor, r in (("R1", 0.050), ("R2", 0.046), ("R3", 0.055)):
        for n in range(28):
            hours = 6.0 * n
            moment = start + dt.timedelta(hours=hours)
            local = moment.astimezone(_central_european(moment))
            p = 3.8 / (1.0 + (3.8 / 0.2 - 1.0) * np.exp(-r * hours))
            p *= np.exp(rng.normal(0.0, 0.04))
            rows.append({"Sampled at": local.isoformat(timespec="minutes"), "Reactor": reactor,
                         "Dry weight (g/L)": round(float(p), 3)})
    return pd.DataFrame(rows)


def _central_european(moment: dt.datetime) -> dt.timezone:
    change = dt.datetime(2024, 3, 31, 1, 0, tzinfo=dt.timezone.utc)
    return dt.timezone(dt.timedelta(hours=2 if moment >= change else 1))


def _clock(hours: float) -> str:
    total = int(round(hours * 3600))
    return f"{total // 3600}:{total // 60 % 60:02d}:{total % 60:02d}"


def write_plate_xlsx(frame: pd.DataFrame, path: str) -> None:
    """The plate run as a workbook: a merged title row, a blank row, then the table.

    Times are stored as spreadsheet durations (fractions of a day shown as [h]:mm:ss), the way
    plate-reader software exports them.
    """
    from openpyxl import Workbook

    book = Workbook()
    sheet = book.active
    sheet.title = "OD600"
    sheet["A1"] = "Invented demo data: 12-well plate-reader run, OD600 (dimensionless)"
    sheet.merge_cells(start_row=1, start_column=1, end_row=1, end_column=13)
    sheet.append([])
    sheet.append(["Time"] + [c for c in frame.columns if c != "Time"])
    for _, row in frame.iterrows():
        h, m, s = (int(x) for x in str(row["Time"]).split(":"))
        sheet.append([(h * 3600 + m * 60 + s) / 86400.0] + [float(row[c]) for c in frame.columns if c != "Time"])
    for cells in sheet.iter_rows(min_row=4, min_col=1, max_col=1):
        cells[0].number_format = "[h]:mm:ss"
    book.properties.creator = "growthcore sample_data/make_samples.py"
    book.properties.created = FIXED_TIME
    book.properties.modified = FIXED_TIME
    book.save(path)
    _fix_zip_times(path)


def _fix_zip_times(path: str) -> None:
    """Rewrite the archive with fixed member times and properties so that reruns give the same bytes."""
    with zipfile.ZipFile(path) as src:
        members = [(i.filename, src.read(i.filename)) for i in src.infolist()]
    stamp = FIXED_TIME.strftime("%Y-%m-%dT%H:%M:%SZ")
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for name, data in members:
            if name == "docProps/core.xml":
                text = data.decode("utf-8")
                for tag in ("dcterms:created", "dcterms:modified"):
                    start = text.find(f"<{tag}")
                    if start >= 0:
                        open_end = text.index(">", start) + 1
                        close = text.index(f"</{tag}>", open_end)
                        text = text[:open_end] + stamp + text[close:]
                data = text.encode("utf-8")
            info = zipfile.ZipInfo(name, date_time=FIXED_TIME.timetuple()[:6])
            info.compress_type = zipfile.ZIP_DEFLATED
            dst.writestr(info, data)


def main(folder: str = HERE) -> None:
    """Write every demo file into ``folder`` (by default, this one)."""
    os.makedirs(folder, exist_ok=True)
    rng = np.random.default_rng(SEED)
    algae = algae_photobioreactor(rng)
    census = island_census(rng)
    plate = plate_reader(rng)
    replicates = reactor_replicates(rng)
    algae.to_csv(os.path.join(folder, "algae_photobioreactor.csv"), index=False, lineterminator="\n")
    census.to_csv(os.path.join(folder, "island_census.csv"), index=False, lineterminator="\n")
    plate.to_csv(os.path.join(folder, "plate_reader_wide.csv"), index=False, lineterminator="\n")
    replicates.to_csv(os.path.join(folder, "reactor_replicates_long.csv"), index=False, lineterminator="\n")
    write_plate_xlsx(plate, os.path.join(folder, "plate_reader_wide.xlsx"))


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else HERE)
