"""Artefacts of a record: residual CSV, PNG panels and sheet, the HTML page (without a browser)."""

from __future__ import annotations

import csv
import io
import json
import re
import struct
import zlib
from pathlib import Path

import plotly.graph_objects as go
import pytest

import growthcore.cli as cli
from growthcore.figures.plain import fit_label
from growthcore.reopen import load_record, parse_record
from growthcore.report import residual_csv_text, write_pngs
from growthcore.report.images import NO_BROWSER, ImageExportError, find_browser, png_size, with_dpi
from growthcore.report.page import report_html
from growthcore.report.panels import panel_figures, summary_sheet, summary_sheets
from growthcore.schemas import record_errors
from tests.record_cases import FIXTURES, SAMPLES, record_cases

FIXTURE = FIXTURES / "fit-record-v1.json"
needs_browser = pytest.mark.skipif(find_browser() is None, reason="no Chromium for kaleido")


def _chunks(png: bytes) -> list[tuple[bytes, bytes]]:
    """(type, data) of every chunk, checking each CRC (PNG specification, section 5.3)."""
    out, pos = [], 8
    while pos < len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        kind, data = png[pos + 4:pos + 8], png[pos + 8:pos + 8 + length]
        (crc,) = struct.unpack(">I", png[pos + 8 + length:pos + 12 + length])
        assert crc == zlib.crc32(kind + data) & 0xFFFFFFFF, kind
        out.append((kind, data))
        pos += 12 + length
    return out


def test_csv_rows_match_the_record() -> None:
    record = record_cases()["census-both-methods"]
    rows = list(csv.reader(io.StringIO(residual_csv_text(record))))
    header, body = rows[0], rows[1:]
    assert header[5] == "time (yr)" and header[-2:] == ["residual", "residual scale"]
    expected = [(f["model"], f["method"], r) for f in record["fits"] for r in f["residuals"]]
    assert len(body) == len(expected)
    for row, (model, method, r) in zip(body, expected, strict=True):
        assert row[1] == model and row[2] == method
        assert float(row[5]) == r["t"] and float(row[6]) == r["observed"]
        assert float(row[7]) == r["predicted"] and float(row[8]) == r["residual"]


def test_csv_log_error_says_its_scale() -> None:
    rows = list(csv.DictReader(io.StringIO(residual_csv_text(record_cases()["algae-log-error-fixed-K"]))))
    assert rows and {r["residual scale"] for r in rows} == {"ln(state)"}


def test_csv_guards_against_formula_injection() -> None:
    """A series named like a spreadsheet formula is written with a leading apostrophe (OWASP advice)."""
    record = record_cases()["census-both-methods"]
    record["data"]["name"] = "=HYPERLINK(\"http://example.invalid\")"
    text = residual_csv_text(record)
    first = list(csv.reader(io.StringIO(text)))[1][0]
    assert first.startswith("'=")
    assert not any(cell.startswith(("=", "+", "@")) for row in csv.reader(io.StringIO(text)) for cell in row)


def test_cli_writes_csv_and_html_and_a_sound_record(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out, table, page = tmp_path / "r.json", tmp_path / "r.csv", tmp_path / "r.html"
    status = cli.main(["fit", str(SAMPLES / "algae_photobioreactor.csv"), "--model", "logistic,logistic-curve",
                       "--out", str(out), "--csv", str(table), "--html", str(page)])
    assert status == 0
    record = load_record(out)  # checks the hash and the schema
    assert record_errors(record, record["format_version"]) == []
    assert table.read_text(encoding="utf-8").count("\n") == 1 + sum(len(f["residuals"]) for f in record["fits"])
    assert "HTML report written" in capsys.readouterr().out
    embedded = re.search(r'<script type="application/json" id="fit-record">(.*?)</script>',
                         page.read_text(encoding="utf-8"), re.S)
    assert embedded and parse_record(embedded.group(1)) == record


def test_figures_are_valid_plotly() -> None:
    """plotly's own validation accepts every panel and both sheet layouts."""
    for record in record_cases().values():
        for fig in panel_figures(record).values():
            go.Figure(fig)
        go.Figure(summary_sheet(record))
        go.Figure(summary_sheet(record, landscape=True))


def test_panels_show_the_record_numbers() -> None:
    record = record_cases()["census-both-methods"]
    figures = panel_figures(record)
    assert {"data", "residuals", "comparison", "parameters", "profile"} <= set(figures)
    table = figures["parameters"]["data"][0]["cells"]["values"]
    k = record["fits"][1]["parameters"]["K"]
    assert f"{k['value']:.6g}" in table[2]
    residuals = [t for t in figures["residuals"]["data"] if t.get("name", "").startswith("logistic (trajectory")]
    assert residuals and residuals[0]["y"] == [r["residual"] for r in record["fits"][1]["residuals"]]


def test_every_exported_plot_names_a_form_by_its_one_label() -> None:
    """Data, residual and profile panels and the sheet call a form what the screen calls it."""
    seen = 0
    for case, record in record_cases().items():
        labels = {fit_label(f) for f in record["fits"]}
        figures = [*panel_figures(record).values(), *summary_sheets(record)]
        names = {t["name"].replace("<br>", " ") for fig in figures for t in fig["data"]
                 if t.get("type") != "table" and t.get("name")}
        named = {n for n in names if any(n.startswith(f"{f['model']} (") for f in record["fits"])}
        odd = {n for n in named if not any(n == lab or n.startswith(f"{lab}, ") for lab in labels)}
        assert not odd, (case, odd)
        seen += len(named)
    assert seen
    profiled = record_cases()["census-both-methods"]
    names = [t["name"] for t in panel_figures(profiled)["profile"]["data"] if t.get("showlegend", True)]
    assert names and set(names) <= {fit_label(f) for f in profiled["fits"]}


def test_html_is_self_contained_and_escapes_user_text() -> None:
    record = record_cases()["census-both-methods"]
    record["data"]["name"] = "<script>alert('x')</script>"
    page = report_html(record, plotlyjs="/* plotly.js */")
    assert "<script>alert" not in page and "&lt;script&gt;alert" in page
    assert not re.search(r"""<(script|link|img|iframe)[^>]+(src|href)=["']?(https?:)?//""", page)
    assert "default-src 'none'" in page  # the page may not fetch anything
    assert page.count('data-panel="') == len(panel_figures(record))


def test_png_dpi_chunk() -> None:
    """pHYs holds pixels per metre: 300 dpi = 300 / 0.0254 ≈ 11811 (PNG specification, section 11.3.5.3)."""
    tiny = (b"\x89PNG\r\n\x1a\n" + _chunk(b"IHDR", struct.pack(">IIBBBBB", 3, 2, 8, 2, 0, 0, 0))
            + _chunk(b"IEND", b""))
    out = with_dpi(tiny, 300)
    kinds = [k for k, _ in _chunks(out)]
    assert kinds == [b"IHDR", b"pHYs", b"IEND"]
    assert struct.unpack(">IIB", dict(_chunks(out))[b"pHYs"]) == (11811, 11811, 1)
    assert png_size(out) == (3, 2)


def _chunk(kind: bytes, data: bytes) -> bytes:
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)


@needs_browser
def test_png_files_have_the_requested_size(tmp_path: Path) -> None:
    record = record_cases()["census-custom-terms"]  # one fit: few panels, a quick test
    paths = write_pngs(record, tmp_path / "print", size="print", width=400, height=300)
    names = {p.stem for p in paths}
    assert {"data", "residuals", "comparison", "parameters", "summary-sheet"} <= names
    for p in paths:
        png = p.read_bytes()
        expected = (2481, 3507) if p.stem == "summary-sheet" else (1200, 900)  # A4 at 300 dpi; 400×300 at scale 3
        assert png_size(png) == expected, p.name
        assert struct.unpack(">IIB", dict(_chunks(png))[b"pHYs"]) == (11811, 11811, 1)


@needs_browser
def test_report_command_writes_screen_pngs(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out, source = tmp_path / "png", tmp_path / "one-fit.json"
    source.write_text(json.dumps(record_cases()["census-custom-terms"]), encoding="utf-8")
    assert cli.main(["report", str(source), "--png", str(out), "--image-scale", "0.5"]) == 0
    sizes = {p.stem: png_size(p.read_bytes()) for p in out.glob("*.png")}
    assert sizes["data"] == (480, 300) and sizes["summary-sheet"] == (600, 775)
    assert "PNG images (screen)" in capsys.readouterr().out


def test_no_browser_gives_one_clear_line(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                         capsys: pytest.CaptureFixture[str]) -> None:
    monkeypatch.setenv("BROWSER_PATH", str(tmp_path / "no-such-browser"))
    with pytest.raises(ImageExportError, match="needs Chromium or Chrome"):
        write_pngs(load_record(FIXTURE), tmp_path / "png")
    assert cli.main(["report", str(FIXTURE), "--png", str(tmp_path / "png")]) == 1
    err = capsys.readouterr().err.strip()
    assert err == f"growthcore report: {NO_BROWSER}"


def test_report_command_refuses_a_damaged_record(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    bad = tmp_path / "bad.json"
    bad.write_text(FIXTURE.read_text(encoding="utf-8")[:5000], encoding="utf-8")
    assert cli.main(["report", str(bad), "--html", str(tmp_path / "r.html")]) == 1
    assert "cut short" in capsys.readouterr().err
    assert not (tmp_path / "r.html").exists()
    text = json.loads(FIXTURE.read_text(encoding="utf-8"))
    text["fits"][0]["metrics"]["aicc"] = 1.0
    bad.write_text(json.dumps(text), encoding="utf-8")
    assert cli.main(["report", str(bad)]) == 1
    assert "integrity hash mismatch" in capsys.readouterr().err
