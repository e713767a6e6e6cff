"""The HTML report opened from disk in headless Chromium with the network cut off: every figure draws.

Without Chromium the test skips, except under CI (CI=true), where it fails (tests/app/browser/conftest.py).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from growthcore.reopen import load_record
from growthcore.report import write_html
from tests.app.browser.page import wait
from tests.record_cases import FIXTURES

#: No name resolves and no proxy answers: any fetch the page tried would fail.
OFFLINE = ("--host-resolver-rules=MAP * ~NOTFOUND", "--proxy-server=127.0.0.1:9")


@pytest.fixture()
def driver(make_driver):
    return make_driver(1200, 900, extra_args=OFFLINE, browser_log=True)


@pytest.mark.browser
def test_report_opens_offline_and_draws_every_figure(driver, tmp_path: Path) -> None:
    record = load_record(FIXTURES / "fit-record-v1.json")
    page = write_html(record, tmp_path / "report.html")
    driver.set_network_conditions(offline=True, latency=0, download_throughput=0, upload_throughput=0)
    driver.get(page.resolve().as_uri())
    panels = driver.find_elements("css selector", "[data-panel]")
    assert len(panels) >= 6

    def drawn(d) -> bool:
        return d.execute_script(
            "return Array.from(document.querySelectorAll('[data-panel]'))"
            ".every(e => e.classList.contains('js-plotly-plot') && e.querySelector('svg.main-svg'));")

    wait(driver, drawn, timeout=20, poll=0.5)  # selenium's own default poll
    # Each plot panel drew its traces; each table panel its cells.
    counts = driver.execute_script(
        "return Array.from(document.querySelectorAll('[data-panel]')).map("
        "e => [e.dataset.panel, e.querySelectorAll('.scatterlayer .trace, .table .column-cell').length]);")
    assert all(n > 0 for _, n in counts), counts
    # Interactive: plotly's mode bar is there, and the embedded record offers itself for saving.
    assert driver.find_elements("css selector", "#panel-data .modebar")
    href = driver.find_element("id", "record-download").get_attribute("href")
    assert href.startswith("blob:")
    assert driver.execute_script("return JSON.parse(document.getElementById('fit-record').textContent).format")\
        == "growthcore.fit-record"
    errors = [e for e in driver.get_log("browser") if e["level"] == "SEVERE"]
    assert not errors, errors
