"""The Firmware page in Debian's Chromium: downloads, live recompute, errors, layout.

Runs against a real uvicorn server on a random loopback port; every request
the page makes must stay on 127.0.0.1 and no console error may appear.
"""

from __future__ import annotations

import shutil
import subprocess

import pytest

from tests.live import open_page

pytestmark = pytest.mark.browser


def _ready(page):
    page.wait_for_function("() => document.querySelector('#fw-curve .main-svg') !== null && "
                           "document.getElementById('fw-valid').textContent.includes('…')")


def _clean(log, refused: int = 0):
    """No errors but the browser's own note on each deliberately refused request (422)."""
    expected = [e for e in log.console_errors if "status of 422" in e]
    assert len(expected) == refused and len(log.console_errors) == refused, log.console_errors
    assert log.page_errors == [], log.page_errors
    assert log.outside() == [], log.outside()


def test_page_downloads_a_c_header_that_compiles(live_server, browser, tmp_path):
    page, log = open_page(browser)
    page.goto(live_server.url + "/firmware")
    _ready(page)
    assert page.locator("#fw-valid").inner_text().startswith("80")
    with page.expect_download() as info:
        page.click("#fw-dl-c")
    download = info.value
    assert download.suggested_filename == "temp_table.h"
    path = tmp_path / "temp_table.h"
    download.save_as(path)
    text = path.read_text(encoding="ascii")
    assert "static const int16_t temp_table_value[TEMP_TABLE_LEN]" in text
    assert "#define TEMP_TABLE_SCALE 100" in text
    gcc = shutil.which("gcc")
    if gcc:  # the compile itself is the C tests' job; here it confirms the download is the whole file
        (tmp_path / "main.c").write_text('#include "temp_table.h"\nint main(void) { return (int)(temp_table_lookup(2000u) < 0); }\n')
        done = subprocess.run([gcc, "-std=c99", "-Wall", "-Wextra", "-Werror", str(tmp_path / "main.c"), "-o", str(tmp_path / "m")],
                              capture_output=True, text=True, cwd=tmp_path, timeout=60)
        assert done.returncode == 0, done.stderr
    with page.expect_download() as info:
        page.click("#fw-dl-csv")
    assert info.value.suggested_filename == "temp_table.csv"
    csv_path = tmp_path / "t.csv"
    info.value.save_as(csv_path)
    assert csv_path.read_text(encoding="utf-8").startswith("code,temperature_c,centre_v,note")
    _clean(log)
    page.context.close()


def test_page_recomputes_and_marks_bad_fields(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/firmware")
    _ready(page)
    before = page.locator("#fw-valid").inner_text()
    page.fill('[name="adc.bits"]', "10")
    page.wait_for_function(f"() => document.getElementById('fw-valid').textContent !== {before!r}")
    assert page.locator("#fw-valid").inner_text().startswith("20 …")  # 80 >> 2
    # A converter too wide for a table: the field is marked and the message names it.
    page.fill('[name="adc.bits"]', "30")
    page.wait_for_selector("#fw-problem:not([hidden])")
    assert page.locator("#fw-problem").inner_text().startswith("adc.bits")
    assert page.get_attribute('[name="adc.bits"]', "aria-invalid") == "true"
    page.fill('[name="adc.bits"]', "12")
    page.wait_for_selector("#fw-problem", state="hidden")
    # The fewest-entry table in the C header.
    page.select_option("#fw-layout", "fewest")
    page.wait_for_function("() => document.getElementById('fw-rows-note').textContent.includes('fewest')")
    # A light sensor: the bound is in decades and there are no Steinhart–Hart coefficients.
    page.select_option("#fw-part", "demo-ldr-small")
    page.wait_for_function("() => document.getElementById('fw-bound-unit').textContent.includes('decades')")
    page.wait_for_function("() => document.getElementById('fw-sh').children.length === 0")
    _clean(log, refused=1)
    page.context.close()


@pytest.mark.parametrize("size", [(1366, 768), (390, 844)], ids=["wide", "phone"])
def test_layout_has_no_sideways_scroll(live_server, browser, size):
    page, log = open_page(browser, viewport=size)
    page.goto(live_server.url + "/firmware")
    _ready(page)
    overflow = page.evaluate("document.documentElement.scrollWidth - document.documentElement.clientWidth")
    assert overflow <= 0
    # Every plot drew with titled axes.
    titles = page.eval_on_selector_all(".plot-panel:not([hidden]) .xtitle", "els => els.map(e => e.textContent)")
    assert titles and all(t == "ADC code (LSB)" for t in titles)
    _clean(log)
    page.context.close()
