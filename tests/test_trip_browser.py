"""The Trip points page in a real Chromium (Debian's, through Playwright).

The page must draw the hysteresis band (a filled trace between the two
reference levels, rendered as a fill path), keep the mains caution in
view, mark the field the server names, and keep every request on
127.0.0.1 with no console errors.
"""

from __future__ import annotations

import re

import pytest

from tests.live import open_page

pytestmark = pytest.mark.browser

BAND_FILLED = """() => {
  const el = document.getElementById('trip-band');
  const fig = el && el._fig;
  if (!fig) return false;
  const filled = fig.data.filter(t => t.fill === 'tonexty');
  return filled.length > 0 && el.querySelectorAll('.scatterlayer .js-fill').length > 0;
}"""


def load(page, url: str) -> None:
    page.goto(url + "/trip")
    page.wait_for_selector("#trip-band .main-svg")
    page.wait_for_function(BAND_FILLED)


def recompute(page, action) -> None:
    with page.expect_response(lambda r: r.url.endswith("/api/view/trip")) as resp:
        action()
    resp.value.finished()
    page.wait_for_timeout(50)


def clean(log) -> None:
    assert log.outside() == []
    assert log.page_errors == []
    assert log.console_errors == []


def test_page_draws_the_band_and_shows_the_caution(browser, live_server):
    page, log = open_page(browser)
    load(page, live_server.url)
    caution = page.locator("#mains-caution")
    assert caution.is_visible()
    assert "licensed electrician" in caution.text_content()
    assert "local electrical codes" in caution.text_content()
    headline = page.text_content("#trip-big")
    assert re.search(r"\d+\.\d\d °C / \d+\.\d\d °C", headline)
    # Resistors are shown as "4.7 kΩ" style values.
    values = page.locator("#trip-parts td strong").all_text_contents()
    assert len(values) >= 4 and all(re.fullmatch(r"\d+(\.\d+)? [kM]?Ω|0 Ω \(link\)", v) for v in values)
    # The spread and trimmer plots of the default preset are drawn too.
    assert page.evaluate("() => document.getElementById('trip-spread')._fig.data.length") >= 2
    assert page.evaluate("() => document.getElementById('trip-adjust')._fig.data.length") >= 2
    clean(log)
    page.context.close()


def test_presets_and_edits_recompute(browser, live_server):
    page, log = open_page(browser)
    load(page, live_server.url)
    recompute(page, lambda: page.click('[data-preset="dusk"]'))
    page.wait_for_function("() => document.getElementById('trip-big').textContent.includes('lx')")
    assert page.locator("#mains-caution").is_visible()
    assert page.evaluate(BAND_FILLED)
    log_x = page.evaluate("() => document.getElementById('trip-band')._fig.layout.xaxis.type")
    assert log_x == "log"
    before = page.text_content("#trip-big")
    recompute(page, lambda: page.fill('[name="target.trip"]', "5"))
    page.wait_for_function(f"() => document.getElementById('trip-big').textContent !== {before!r}")
    trip = float(page.text_content("#trip-big").split(" lx")[0])
    assert trip == pytest.approx(5.0, rel=0.05)  # an E24 design lands within a few per cent
    clean(log)
    page.context.close()


def test_impossible_target_marks_the_field(browser, live_server):
    page, log = open_page(browser)
    load(page, live_server.url)
    good = page.text_content("#trip-big")
    recompute(page, lambda: page.fill('[name="target.release"]', "60"))  # equal to the trip
    page.wait_for_selector("#trip-problem:not([hidden])")
    assert "target.release" in page.text_content("#trip-problem")
    assert page.get_attribute('[name="target.release"]', "aria-invalid") == "true"
    assert page.text_content("#trip-big") == good  # the last good result stays
    recompute(page, lambda: page.fill('[name="target.release"]', "52"))
    page.wait_for_selector("#trip-problem", state="hidden")
    assert page.get_attribute('[name="target.release"]', "aria-invalid") is None
    # Own values for an LDR: the °C targets give way to lux ones, and it solves.
    recompute(page, lambda: page.select_option("#trip-source", "custom:ldr"))
    page.wait_for_function("() => document.getElementById('trip-big').textContent.includes('lx')")
    assert page.input_value('[name="target.trip"]') == "10"
    assert page.text_content('[data-unit="stimulus"]') == "(lux)"
    # The server's 422 for the bad value is expected; nothing else may fail.
    assert log.page_errors == [] and log.outside() == []
    assert all("422" in e for e in log.console_errors)
    page.context.close()


def test_phone_width(browser, live_server):
    page, log = open_page(browser, viewport=(390, 844))
    load(page, live_server.url)
    box = page.locator("#mains-caution").bounding_box()
    assert box and box["y"] < 844 and box["width"] <= 390
    assert page.evaluate("() => document.documentElement.scrollWidth") <= 390
    clean(log)
    page.context.close()
