"""The export action and reopening a record in headless Chromium, with real downloads.

One session sets K and leaves a point out, exports every file at print size and checks each file;
a fresh session reopens the record and must show the same numbers; a tampered record is refused
in place. Screenshots go to tests/artifacts/. The data are the invented demo file.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import struct
import tempfile
import time
import zlib
from collections.abc import Callable, Iterator
from functools import partial
from typing import Any

import jsonschema
import pytest

from growthcore.report.images import PANEL_SIZES, SHEET_SIZES, png_size
from growthcore.schemas import record_schema
from tests.app.browser import page
from tests.app.browser.conftest import CHROMEDRIVER, chromium_options
from tests.app.browser.page import comparison_rows, hold_k, shot, text

pytestmark = pytest.mark.browser

K = 4.3
EXCLUDED_ROW = 6

wait = partial(page.wait, timeout=30, poll=0.1)
wait_idle = partial(page.wait_idle, timeout=30, poll=0.1)
open_demo = partial(page.open_demo, timeout=30, poll=0.1)


@pytest.fixture()
def downloading_driver() -> Iterator[Callable[[], tuple[Any, str]]]:
    """Chromium drivers that save downloads (several per page) into their own temporary folder."""
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    made: list[tuple[Any, str, str]] = []

    def make() -> tuple[Any, str]:
        profile = tempfile.mkdtemp(prefix="gc-chromium-")
        downloads = tempfile.mkdtemp(prefix="gc-downloads-")
        options = chromium_options(profile, 1280, 900)
        options.add_experimental_option("prefs", {
            "download.default_directory": downloads, "download.prompt_for_download": False,
            "download.directory_upgrade": True, "safebrowsing.enabled": False,
            "profile.default_content_setting_values.automatic_downloads": 1,
        })
        driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
        driver.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": downloads})
        driver.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                               {"width": 1280, "height": 900, "deviceScaleFactor": 1, "mobile": False})
        made.append((driver, profile, downloads))
        return driver, downloads

    yield make
    for driver, profile, downloads in made:
        try:
            driver.quit()
        except Exception:  # noqa: BLE001 - a driver that died already needs no quitting
            pass
        shutil.rmtree(profile, ignore_errors=True)
        shutil.rmtree(downloads, ignore_errors=True)


def _type(driver: Any, element_id: str, text: str) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.common.keys import Keys

    box = driver.find_element(By.ID, element_id)
    driver.execute_script("arguments[0].scrollIntoView({block: 'center'})", box)
    box.send_keys(Keys.CONTROL, "a")
    box.send_keys(text, Keys.ENTER)


def _set_dependent(driver: Any) -> tuple[int, ...]:
    """Columns whose values depend on which forms are compared: ΔAICc and the Akaike weight."""
    heads = driver.execute_script(
        "return Array.from(document.querySelectorAll('#comparison-table thead th')).map(t => t.innerText);")
    return tuple(k for k, h in enumerate(heads) if h.startswith(("ΔAICc", "Akaike")))


def _per_form(rows: list[str], skip: tuple[int, ...]) -> dict[str, tuple[str, ...]]:
    """Comparison rows by form: every cell but the best mark, ΔAICc and the Akaike weight (found by
    their headers, so that a new column does not shift what is compared)."""
    out = {}
    for row in rows:
        cells = row.split("\t")
        out[cells[1].strip()] = tuple(c.strip() for k, c in enumerate(cells) if k not in (0, *skip))
    return out


def _finished(folder: str, count: int) -> list[str]:
    names = sorted(os.listdir(folder))
    done = [n for n in names if not n.endswith((".crdownload", ".tmp"))]
    return done if len(done) >= count and len(done) == len(names) else []


def _dpi(png: bytes) -> float | None:
    """Pixels per inch from the pHYs chunk (PNG specification, section 11.3.5.3), or None."""
    pos = 8
    while pos < len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        kind = png[pos + 4:pos + 8]
        if kind == b"pHYs":
            body = png[pos + 8:pos + 8 + length]
            (crc,) = struct.unpack(">I", png[pos + 8 + length:pos + 12 + length])
            assert crc == zlib.crc32(kind + body) & 0xFFFFFFFF, "pHYs chunk with a wrong CRC"
            x, _y, unit = struct.unpack(">IIB", body)
            return x * 0.0254 if unit == 1 else None
        pos += 12 + length
    return None


def _decodes(png: bytes) -> None:
    """Every IDAT chunk inflates: the image is whole, not only its header."""
    pos, idat = 8, b""
    while pos < len(png):
        (length,) = struct.unpack(">I", png[pos:pos + 4])
        if png[pos + 4:pos + 8] == b"IDAT":
            idat += png[pos + 8:pos + 8 + length]
        pos += 12 + length
    assert len(zlib.decompress(idat)) > 0


def test_export_every_file_then_reopen_and_refuse_a_tampered_record(
        server_url: str, downloading_driver: Any, artifacts: str, tmp_path: Any) -> None:
    from selenium.webdriver.common.by import By

    driver, downloads = downloading_driver()
    open_demo(driver, server_url)
    # a K of our own and one point left out, so that the record carries both
    hold_k(driver)
    _type(driver, "model-k-input", str(K))
    wait(driver, lambda d: f"K = {K:g} (held)" in "\n".join(comparison_rows(d)))
    _type(driver, "exclusion-row", str(EXCLUDED_ROW))
    driver.find_element(By.ID, "exclusion-row-button").click()
    wait(driver, lambda d: f"row {EXCLUDED_ROW}" in text(d, "exclusion-list"))
    wait_idle(driver)
    rows_before = comparison_rows(driver)

    driver.execute_script("document.getElementById('slot-export').scrollIntoView({block: 'start'})")
    wait(driver, lambda d: "logistic (increments)" in text(d, "export-forms"))
    driver.find_element(By.CSS_SELECTOR, "#export-size input[value=print]").click()
    # leave out one form to see that only the chosen forms are exported
    driver.find_element(By.CSS_SELECTOR, "#export-forms input[value=ricker]").click()
    shot(driver, artifacts, "20-export-section", "slot-export")
    started = time.monotonic()
    driver.find_element(By.ID, "export-button").click()
    wait(driver, lambda d: "PNG images (print) saved" in text(d, "export-image-message"), timeout=60)
    # the count the message announces is the count of files delivered, each named as announced
    message = text(driver, "export-message")
    announced = int(re.search(r"(\d+) PNG images \(print\) follow", message).group(1))
    assert f"{announced} of {announced} PNG images (print) saved" in text(driver, "export-image-message")
    expected = 3 + announced  # record, CSV, HTML and every announced PNG
    files = wait(driver, lambda d: _finished(downloads, expected), timeout=30)
    time.sleep(1.0)
    files = sorted(n for n in os.listdir(downloads) if not n.endswith((".crdownload", ".tmp")))
    assert len(files) == expected, files
    saved_names = text(driver, "export-image-message").split("saved: ", 1)[1].rstrip(".").split(", ")
    assert sorted(saved_names) == sorted(n for n in files if n.endswith(".png"))
    elapsed = time.monotonic() - started
    shot(driver, artifacts, "21-exported", "slot-export")
    print(f"export at print size: {len(files)} files in {elapsed:.1f} s")
    assert "Exported 3 fits of 3 forms" in message
    # names carry the source file, the series and the forms, so two files' exports never collide
    assert all(n.startswith("algae_photobioreactor-Dry-weight-logistic_gompertz_beverton-holt-") for n in files), files

    by_end = {name.split("-", 2)[-1] if name.count("-") >= 2 else name: name for name in files}
    record_name = next(n for n in files if n.endswith("fit-record.json"))
    with open(os.path.join(downloads, record_name), encoding="utf-8") as fh:
        record_text = fh.read()
    record = json.loads(record_text)
    assert list(jsonschema.Draft202012Validator(record_schema(record["format_version"])).iter_errors(record)) == []
    assert [f["model"] for f in record["fits"]] == ["logistic", "gompertz", "beverton-holt"]
    assert record["settings"]["capacity"] == K
    excluded = [p for p in record["data"]["points"] if not p["used"]]
    assert [(p["row"], p["reason"]) for p in excluded] == [(EXCLUDED_ROW, "excluded by the user")]

    csv_name = next(n for n in files if n.endswith("residuals.csv"))
    with open(os.path.join(downloads, csv_name), encoding="utf-8") as fh:
        lines = fh.read().splitlines()
    assert lines[0].startswith("series,model,method,error model,prediction,time (h),observed (g/L)")
    assert len(lines) - 1 == sum(len(f["residuals"]) for f in record["fits"])

    html_name = next(n for n in files if n.endswith("report.html"))
    with open(os.path.join(downloads, html_name), encoding="utf-8") as fh:
        html = fh.read()
    assert "Plotly.newPlot" in html and 'id="panel-data"' in html and 'id="panel-comparison"' in html
    assert record["integrity"]["value"] in html

    pngs = [n for n in files if n.endswith(".png")]
    assert len(pngs) == announced >= 9, by_end
    panel_px, sheet_px = PANEL_SIZES["print"].pixels, SHEET_SIZES["print"].pixels
    for name in pngs:
        with open(os.path.join(downloads, name), "rb") as fh:
            png = fh.read()
        want = sheet_px if "summary-sheet" in name else panel_px
        assert png_size(png) == want, name
        assert _dpi(png) == pytest.approx(300, abs=0.01), name
        _decodes(png)
    kept = os.path.join(artifacts, "22-exported-summary-sheet.png")
    shutil.copy(os.path.join(downloads, next(n for n in pngs if n.endswith("summary-sheet.png"))), kept)

    # a fresh session: reopen the record, see the same K, exclusion and numbers
    fresh, _ = downloading_driver()
    open_demo(fresh, server_url)
    assert comparison_rows(fresh) != rows_before
    record_path = tmp_path / "reopen.json"
    record_path.write_text(record_text, encoding="utf-8")
    fresh.find_element(By.CSS_SELECTOR, "#export-record-upload input[type=file]").send_keys(str(record_path))
    wait(fresh, lambda d: "Reopened reopen.json" in text(d, "export-record-message"))
    wait(fresh, lambda d: f"K = {K:g} (held)" in "\n".join(comparison_rows(d)) and len(comparison_rows(d)) == 3)
    wait_idle(fresh)
    # the same constants, intervals and metrics per form; ΔAICc and weights change with the set of forms
    skip = _set_dependent(fresh)
    assert len(skip) == 2
    expected_rows = {k: v for k, v in _per_form(rows_before, skip).items() if not k.startswith("ricker")}
    assert _per_form(comparison_rows(fresh), skip) == expected_rows
    assert len(expected_rows) == 3
    assert float(fresh.find_element(By.ID, "model-k-input").get_attribute("value")) == K
    assert f"row {EXCLUDED_ROW}" in text(fresh, "exclusion-list")
    shot(fresh, artifacts, "23-reopened")
    shot(fresh, artifacts, "24-reopened-export", "slot-export")

    # a tampered record: one constant changed by hand
    tampered = json.loads(record_text)
    tampered["fits"][0]["parameters"]["r"]["value"] *= 1.05
    bad_path = tmp_path / "edited.json"
    bad_path.write_text(json.dumps(tampered, indent=2), encoding="utf-8")
    fresh.find_element(By.CSS_SELECTOR, "#export-record-upload input[type=file]").send_keys(str(bad_path))
    wait(fresh, lambda d: "Not reopened" in text(d, "export-record-message"))
    message = text(fresh, "export-record-message")
    assert "edited.json" in message and "integrity hash mismatch" in message
    wait_idle(fresh)
    assert _per_form(comparison_rows(fresh), skip) == expected_rows, "a refused record must leave the session as it was"
    assert fresh.execute_script("return document.getElementById('app-error').hidden") is True
    shot(fresh, artifacts, "25-tampered-refused", "slot-export")
