"""Limits checked before work, atomic writes, safe grouping patterns, and the import quirks they fixed.

Outside references: CPython's ``re`` module is the reference for what a pattern matches (the
safe subset must agree with it wherever it accepts a pattern); the write-beside, fsync, rename
sequence is the POSIX way to replace a file atomically (rename(2) is atomic within one file
system: common practice, from memory of the POSIX rename specification).
"""

from __future__ import annotations

import json
import os
import random
import re
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from growthcore.batch import groups_from_pattern
from growthcore.batch.pattern import compile_pattern
from growthcore.cli import main
from growthcore.errors import GrowthcoreInputError, ImportFailure
from growthcore.io import load_bytes
from growthcore.io.writer import atomic_write_text, atomic_writer
from growthcore.limits import DEFAULT, Limits
from growthcore.record import seal

ROOT = Path(__file__).resolve().parents[1]


def _env() -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", "")}


def _culture(n: int = 24) -> str:
    """Invented culture densities (tests only)."""
    t = np.arange(n, dtype=float)
    p = 80.0 / (1.0 + 39.0 * np.exp(-0.45 * t))
    return "Time (h),OD\n" + "".join(f"{a:g},{b:.6g}\n" for a, b in zip(t, p, strict=True))


# ----------------------------------------------------------------------------- limits on import

def test_cells_and_columns_refused_with_the_limit_named() -> None:
    small = Limits(max_cells=100, max_columns=5)
    with pytest.raises(ImportFailure, match=r"over the limit of 100 cells"):
        load_bytes(_culture(60).encode(), "long.csv", limits=small)
    wide = "a,b,c,d,e,f,g\n" + "1,2,3,4,5,6,7\n" * 3
    with pytest.raises(ImportFailure, match=r"row 1 holds 7 fields, over the limit of 5 columns"):
        load_bytes(wide.encode(), "wide.csv", limits=small)
    # quoted delimiters are not fields: the count agrees with csv.reader
    quoted = 'Time (h),"OD, a,b,c,d,e,f"\n' + "".join(f"{i},{i + 1}\n" for i in range(5))
    assert load_bytes(quoted.encode(), "quoted.csv", limits=small).series


def test_points_and_series_limits() -> None:
    with pytest.raises(ImportFailure, match=r"has 60 points, over the limit of 50 points"):
        load_bytes(_culture(60).encode(), "c.csv", limits=Limits(max_points=50))
    wide = "t," + ",".join(f"w{i}" for i in range(8)) + "\n" + "".join(
        f"{i}," + ",".join(str(i + j + 1) for j in range(8)) + "\n" for i in range(5))
    with pytest.raises(ImportFailure, match=r"holds 8 series, over the limit of 4 series"):
        load_bytes(wide.encode(), "w.csv", limits=Limits(max_series=4))


def _xlsx(cells: dict[str, object], dimension: str = "A1") -> bytes:
    """A workbook written cell by cell (the sheet XML by hand, so any dimension can be claimed)."""
    import io
    import zipfile

    def cell(ref: str, v: object) -> str:
        if isinstance(v, str):
            return f'<c r="{ref}" t="inlineStr"><is><t>{v}</t></is></c>'
        return f'<c r="{ref}"><v>{v}</v></c>'

    rows: dict[int, list[str]] = {}
    for ref, v in cells.items():
        rows.setdefault(int(re.sub(r"[A-Z]", "", ref)), []).append(cell(ref, v))
    body = "".join(f'<row r="{r}">{"".join(c)}</row>' for r, c in sorted(rows.items()))
    ns = 'xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"'
    rel = 'xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"'
    pkg = "http://schemas.openxmlformats.org/package/2006"
    office = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
    files = {
        "[Content_Types].xml": f'<?xml version="1.0"?><Types xmlns="{pkg}/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/>'
        '<Default Extension="xml" ContentType="application/xml"/>'
        '<Override PartName="/xl/workbook.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/>'
        '<Override PartName="/xl/worksheets/sheet1.xml" '
        'ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>'
        '</Types>',
        "_rels/.rels": f'<?xml version="1.0"?><Relationships xmlns="{pkg}/relationships">'
        f'<Relationship Id="rId1" Type="{office}/officeDocument" Target="xl/workbook.xml"/>'
        '</Relationships>',
        "xl/workbook.xml": f'<?xml version="1.0"?><workbook {ns} {rel}>'
        '<sheets><sheet name="Data" sheetId="1" r:id="rId1"/></sheets></workbook>',
        "xl/_rels/workbook.xml.rels": f'<?xml version="1.0"?><Relationships xmlns="{pkg}/relationships">'
        f'<Relationship Id="rId1" Type="{office}/worksheet" Target="worksheets/sheet1.xml"/>'
        '</Relationships>',
        "xl/worksheets/sheet1.xml": f'<?xml version="1.0"?><worksheet {ns}><dimension ref="{dimension}"/>'
        f'<sheetData>{body}</sheetData></worksheet>',
    }
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name, text in files.items():
            z.writestr(name, text)
    return buf.getvalue()


def test_workbook_reader_walks_only_cells_present() -> None:
    cells: dict[str, object] = {"A1": "Time (h)", "B1": "OD"}
    for i in range(6):
        cells[f"A{i + 2}"], cells[f"B{i + 2}"] = i, 0.1 * 2 ** i
    cells["ZZ200000"] = 1  # a stray cell far away, and a sheet that claims the whole range
    imported = load_bytes(_xlsx(cells, "A1:ZZ200000"), "bomb.xlsx")
    assert imported.series[0].t.size == 6
    with pytest.raises(ImportFailure, match=r"column 702 .*over the limit of 500 columns"):
        load_bytes(_xlsx(cells, "A1:ZZ200000"), "bomb.xlsx", limits=Limits(max_columns=500))
    with pytest.raises(ImportFailure, match=r"more than 10 cells \(the limit\)"):
        load_bytes(_xlsx(cells), "many.xlsx", limits=Limits(max_cells=10))


# ----------------------------------------------------------------------------- import quirks

@pytest.mark.parametrize("first", ["nan", "inf", "-inf", "1e308", "1e309", "NA"])
def test_placeholders_at_the_start_keep_the_header(first: str) -> None:
    text = "Time (h),OD\n" + "".join(f"{i},{first}\n" for i in range(3)) + "".join(
        f"{i},{0.1 * 2 ** i}\n" for i in range(3, 9))
    report = load_bytes(text.encode(), "q.csv").report
    assert report.header_row == 1
    assert report.columns == ("Time (h)", "OD")


def test_too_few_points_counts_points() -> None:
    with pytest.raises(ImportFailure, match=r"usable 'OD': 2\)"):
        load_bytes(b"Time (h),OD\n0,0.1\n1,0.2\n", "few.csv")


def test_values_that_differ_only_in_surrounding_spaces_are_named_when_merged() -> None:
    """Trimmed values are read as one: said in a note for a condition column (all of whose values may
    then be one, so that the rows are read as one series) and for workbooks as for text files."""
    well = ["A1", "A1 ", " A1"]
    text = "well,Time (h),OD\n" + "".join(f"{w},{i},{0.1 * 2 ** i + k}\n" for k, w in enumerate(well) for i in range(4))
    notes = load_bytes(text.encode(), "wells.csv").report.notes
    assert "'well' value 'A1' is written with surrounding spaces in row(s) 6-13 and without them elsewhere: " \
           "read as one value" in notes
    cells: dict[str, object] = {"A1": "well", "B1": "Time (h)", "C1": "OD"}
    for i in range(8):
        cells[f"A{i + 2}"] = "B2" if i < 4 else "B2 "
        cells[f"B{i + 2}"], cells[f"C{i + 2}"] = i % 4, 0.1 * 2 ** (i % 4) + i // 4
    for i in range(4):
        cells[f"A{i + 10}"], cells[f"B{i + 10}"], cells[f"C{i + 10}"] = "C3", i, 0.2 * 2 ** i
    imported = load_bytes(_xlsx(cells, "A1:C13"), "wells.xlsx", series="well")
    assert [s.name for s in imported.series] == ["B2", "C3"]
    assert ("series id 'B2' is written with surrounding spaces in row(s) 6-9 and without them elsewhere: "
            "read as one series") in imported.report.notes


# ----------------------------------------------------------------------------- atomic writes

def test_failed_write_leaves_the_old_file(tmp_path: Path) -> None:
    path = tmp_path / "record.json"
    path.write_text("old\n", encoding="utf-8")
    with pytest.raises(RuntimeError):
        with atomic_writer(path) as fh:
            fh.write("half of the new")
            raise RuntimeError("stopped")
    assert path.read_text(encoding="utf-8") == "old\n"
    assert os.listdir(tmp_path) == ["record.json"]  # the temporary file went with the failure
    atomic_write_text(path, "new\n")
    assert path.read_text(encoding="utf-8") == "new\n"


def test_a_write_that_fails_names_the_file_it_was_for(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """The message names the file asked for, not the temporary one beside it, in the engine and the CLI."""
    import errno

    from growthcore.cli import main

    missing = tmp_path / "no such folder" / "record.json"
    with pytest.raises(OSError) as caught:
        atomic_write_text(missing, "new\n")
    assert str(caught.value).startswith(f"{missing} was not written (") and caught.value.errno == errno.ENOENT
    assert ".part" not in str(caught.value)
    demo = Path(__file__).resolve().parents[1] / "sample_data" / "algae_photobioreactor.csv"
    assert main(["fit", str(demo), "--model", "logistic", "--out", str(missing)]) == 1
    assert f"{missing} was not written" in capsys.readouterr().err


def test_killed_writer_leaves_the_old_file(tmp_path: Path) -> None:
    """kill -9 in the middle of a write: the old file is whole, never empty or cut."""
    path = tmp_path / "out.json"
    path.write_text('{"old": true}\n', encoding="utf-8")
    script = (
        "import sys, time\n"
        "from growthcore.io.writer import atomic_writer\n"
        "with atomic_writer(sys.argv[1]) as fh:\n"
        "    fh.write('{\"new\": ')\n    fh.flush()\n"
        "    print('writing', flush=True)\n    time.sleep(30)\n"
    )
    proc = subprocess.Popen([sys.executable, "-c", script, str(path)], stdout=subprocess.PIPE, env=_env(), text=True)
    assert proc.stdout is not None and proc.stdout.readline().strip() == "writing"
    proc.send_signal(signal.SIGKILL)
    proc.wait(10)
    assert json.loads(path.read_text(encoding="utf-8")) == {"old": True}


@pytest.mark.parametrize("command, name", [("fit", "r.json"), ("batch", "b.csv"), ("batch", "b.json")])
def test_command_line_outputs_replace_the_old_file_only_whole(tmp_path: Path, monkeypatch, capsys,
                                                              command: str, name: str) -> None:
    """``fit --out`` and ``batch --out`` write through the atomic writer: a write stopped before its
    rename (here the disk is full at the rename) leaves the old file whole and nothing beside it."""
    import growthcore.io.writer as writer

    data = tmp_path / "c.csv"
    data.write_text(_culture(), encoding="utf-8")
    out = tmp_path / name
    out.write_text("old\n", encoding="utf-8")

    def full(*_args: object) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(writer.os, "replace", full)
    args = ["fit", str(data), "--no-profile"] if command == "fit" else ["batch", str(data), "--model", "logistic"]
    assert main([*args, "--out", str(out)]) != 0
    err = capsys.readouterr().err
    assert "Traceback" not in err and "No space left on device" in err
    assert out.read_text(encoding="utf-8") == "old\n"
    assert sorted(os.listdir(tmp_path)) == sorted(["c.csv", name])


# ----------------------------------------------------------------------------- grouping patterns

PATTERNS = [r"^(.*)_rep\d+$", r"(?P<group>[A-H])\d+", r"^([A-Z]+)", r"(a|ab)(c|bcd)(d*)", r"(a+)+$", r"x*",
            r"^(\w+?)-(\d{1,3})$", r"[^_]+", r"(.)(.)?", r"a{2,3}", r"(?:ab)+(c)?", r"^$", r"\.(\w+)",
            r"([a-c]+?)(b*)", r"(x|xy)*z", r"^(\s*)(\S+)", r"[-.]([0-9])", r"a{2,}?b"]


def test_safe_patterns_agree_with_re() -> None:
    # reference: CPython's re.search, on random ids over a small alphabet
    rng = random.Random(7)
    texts = ["".join(rng.choice("abcxyz_-.019AB C") for _ in range(rng.randint(0, 12))) for _ in range(1500)]
    texts += ["ctrl_rep1", "A12", "aaaa", "abcd", "acd", "ab-12", "ab-1234", "aab", "aaab"]
    for pattern in PATTERNS:
        ours, ref = compile_pattern(pattern), re.compile(pattern)
        assert ours.groups == ref.groups
        for text in texts:
            a, b = ref.search(text), ours.search(text)
            assert (a is None) == (b is None), (pattern, text)
            if a is not None and b is not None:
                assert [a.group(i) for i in range(ref.groups + 1)] == [b.group(i) for i in range(ours.groups + 1)]


@pytest.mark.parametrize("pattern, why", [
    ("(", "missing '\\)'"), ("(?=a)b", "look-arounds"), (r"(a)\1", r"escape \\1"), ("a**", "quantifier cannot follow"),
    ("(a*)*b", "can match nothing"), ("x{1000}", "at most 100"), ("a" * 201, "over the limit of 200"),
])
def test_unsafe_or_invalid_patterns_refused(pattern: str, why: str) -> None:
    with pytest.raises(GrowthcoreInputError, match=why):
        groups_from_pattern(["a1"], pattern)


def test_nested_quantifier_needs_steps_linear_in_the_id() -> None:
    # ^(a+)+$ on a...a! doubles re's backtracking per character; the Pike VM visits each
    # (position, instruction) pair at most once, so a 5000-character id is answered at once
    assert compile_pattern(r"^(a+)+$").search("a" * 5000 + "!") is None
    mapping, _ = groups_from_pattern(["a" * 28 + "!", "aaa"], r"^(a+)+$")
    assert mapping == {"aaa": re.search(r"^(a+)+$", "aaa").group(1)}  # reference: re, on an id it answers fast


# ----------------------------------------------------------------------------- the command line

def test_capacity_must_be_finite_and_positive(tmp_path: Path, capsys) -> None:
    data = tmp_path / "c.csv"
    data.write_text(_culture(), encoding="utf-8")
    for bad in ("nan", "inf", "-1", "0"):
        assert main(["fit", str(data), "--capacity", bad, "--out", str(tmp_path / "r.json")]) == 1
        err = capsys.readouterr().err
        assert "--capacity must be a finite number above 0" in err and "Traceback" not in err
        assert len(err.strip().splitlines()) == 1
    assert not (tmp_path / "r.json").exists()


@pytest.mark.parametrize("args, message", [
    (["--level", "nan"], "--level must be a finite number; got nan"),
    (["--level", "inf"], "--level must be a finite number; got inf"),
    (["--forecast", "3", "--bound", "nan"], "--bound must be a finite number; got nan"),
    (["--bootstrap", "30", "--seed", "-5"], "--seed must be 0 or larger; got -5"),
])
def test_later_step_options_must_be_usable(tmp_path: Path, capsys, args: list[str], message: str) -> None:
    """Bad values of the later steps are bad input (exit 1, one line), not an internal error after the fits."""
    data = tmp_path / "c.csv"
    data.write_text(_culture(), encoding="utf-8")
    assert main(["fit", str(data), *args, "--no-profile", "--out", str(tmp_path / "r.json")]) == 1
    err = capsys.readouterr().err
    assert message in err and "internal error" not in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "r.json").exists()


@pytest.mark.parametrize("value", ["nan", "inf", "0", "-2"])
def test_serve_upload_limit_must_be_finite_and_positive(value: str, capsys) -> None:
    assert main(["serve", "--max-upload-mb", value, "--no-browser"]) == 1
    err = capsys.readouterr().err
    assert "--max-upload-mb must be a finite number above 0" in err and "internal error" not in err


def test_a_large_byte_limit_costs_only_the_bytes_read(tmp_path: Path) -> None:
    """The file is read in pieces up to the limit: a limit of a petabyte on a small file is not set aside."""
    from growthcore.io import load_file

    path = tmp_path / "c.csv"
    path.write_text(_culture(), encoding="utf-8")
    assert load_file(path, max_bytes=10**15).series[0].t.size == 24
    assert main(["inspect", str(path), "--max-bytes", str(10**15)]) == 0


def test_cli_options_over_limits_refused_before_work(tmp_path: Path, capsys) -> None:
    data = tmp_path / "c.csv"
    data.write_text(_culture(), encoding="utf-8")
    assert main(["fit", str(data), "--bootstrap", str(DEFAULT.max_resamples + 1)]) == 1
    assert "over the limit of 10,000 resamples" in capsys.readouterr().err
    assert main(["fit", str(data), "--forecast", "500000000"]) == 1
    assert "over the limit of 10,000 steps" in capsys.readouterr().err
    wide = ",".join(["logistic", "ricker", "gompertz"] * 7)
    assert main(["fit", str(data), "--model", wide, "--method", "both"]) == 1
    assert "over the limit of 40 fits" in capsys.readouterr().err


def _record(tmp_path: Path) -> dict:
    data = tmp_path / "c.csv"
    data.write_text(_culture(), encoding="utf-8")
    out = tmp_path / "r.json"
    assert main(["fit", str(data), "--out", str(out), "--no-profile"]) == 0
    return json.loads(out.read_text(encoding="utf-8"))


@pytest.mark.parametrize("key, value, message", [
    ("bootstrap", 20_000_000, "over the limit of 10,000 resamples"),
    ("forecast_steps", 500_000_000, "over the limit of 10,000 steps"),
])
def test_rehashed_record_settings_meet_the_same_limits(tmp_path: Path, capsys, key, value, message) -> None:
    record = _record(tmp_path)
    record["settings"][key] = value
    forged = tmp_path / "forged.json"
    forged.write_text(json.dumps(seal(record)), encoding="utf-8")
    capsys.readouterr()
    started = time.monotonic()
    assert main(["fit", "--from-record", str(forged)]) == 1
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err
    assert time.monotonic() - started < 30  # refused before any refit, not after hours of work


def test_rehashed_record_with_too_many_points(tmp_path: Path, capsys) -> None:
    record = _record(tmp_path)
    pt = record["data"]["points"][-1]
    record["data"]["points"] = [dict(pt, t=float(i), row=i + 2) for i in range(DEFAULT.max_points + 1)]
    forged = tmp_path / "forged.json"
    forged.write_text(json.dumps(seal(record)), encoding="utf-8")
    capsys.readouterr()
    assert main(["fit", "--from-record", str(forged)]) == 1
    assert "over the limit of 20,000 points" in capsys.readouterr().err


def test_every_accepted_input_makes_a_readable_record(tmp_path: Path) -> None:
    """The record limit holds the largest record the limits let through.

    Measured: the bytes a record spends per point and per fit on a real record, scaled to
    ``max_fits`` fits of ``max_points`` points, plus an import report at its capped size.
    """
    from growthcore.io.loader import MAX_LISTED, MAX_NOTES

    small = tmp_path / "a.json"
    big = tmp_path / "b.json"
    for n, out in ((200, small), (400, big)):
        data = tmp_path / f"c{n}.csv"
        data.write_text(_culture(n), encoding="utf-8")
        assert main(["fit", str(data), "--model", "logistic,ricker", "--method", "both", "--out", str(out)]) in (0, 1)
    per_point = (big.stat().st_size - small.stat().st_size) / 200  # 4 fits plus the data, per point
    per_point_fit = per_point / 4
    report = MAX_LISTED * 200 + MAX_NOTES * 400 + DEFAULT.max_series * 20 * 120  # generous bytes per entry
    worst = DEFAULT.max_points * per_point_fit * (DEFAULT.max_fits + 1) + report
    assert worst < DEFAULT.max_record_bytes, (per_point_fit, worst)
