"""The accuracy page in real Chromium (Debian ``chromium`` via Playwright).

Checks: the plots carry data, the plain-words summary and the yield are
shown and follow the inputs, a bad value marks its field, a part fills in
its own tolerances, the CSV twin downloads, the page fits a phone, no
console error, and no request leaves 127.0.0.1.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from playwright.sync_api import expect

from tests.live import open_page

pytestmark = pytest.mark.browser

PLOTS = ("acc-errors", "acc-contributors", "acc-output")
SUMMARY = re.compile(r"^±[\d.]+ °C worst case from 0 to 100 °C; 99\.7 % of builds within ±[\d.]+ °C\.$")


def _open(browser, live_server, viewport=(1366, 768)):
    page, log = open_page(browser, viewport)
    page.goto(f"{live_server.url}/accuracy")
    for plot in PLOTS:  # selector waits: the page's CSP forbids the eval behind wait_for_function
        page.wait_for_selector(f"#{plot} .main-svg")
    return page, log


def _traces(page, plot_id):
    return page.evaluate(f"document.getElementById('{plot_id}').data.map(t => (t.y || []).filter(v => v !== null).length)")


def _recomputed(page, action):
    with page.expect_response(lambda r: r.url.endswith("/api/view/accuracy") and r.request.method == "POST") as info:
        action()
    return info.value


def test_page_shows_plots_summary_and_yield(browser, live_server):
    page, log = _open(browser, live_server)
    for plot in PLOTS:
        counts = _traces(page, plot)
        assert counts and all(n == 101 for n in counts), (plot, counts)
    assert SUMMARY.match(page.inner_text("#acc-summary").strip())
    assert re.search(r"Against a spec of ±1 °C: [\d.]+ % of 10,000 simulated builds", page.inner_text("#acc-yield"))
    facts = page.inner_text("#acc-facts")
    assert "Worst case" in facts and "Yield" in facts and "4.7 kΩ" in facts
    table = page.inner_text("#acc-table")
    assert "B value" in table and "Self-heating" in table
    assert log.console_errors == [] and log.page_errors == []
    assert log.outside() == []


def test_inputs_drive_the_budget(browser, live_server):
    page, log = _open(browser, live_server)
    before = page.inner_text("#acc-yield")
    spec = page.locator('[name="spec"]')
    response = _recomputed(page, lambda: spec.fill("0.5"))
    assert response.status == 200
    expect(page.locator("#acc-yield")).to_contain_text("±0.5 °C")
    after = page.inner_text("#acc-yield")
    assert "±0.5 °C" in after and after != before

    # A bad value: the server names the field, the input is marked, the last result stays.
    bits = page.locator('[name="adc.bits"]')
    response = _recomputed(page, lambda: bits.fill("30"))
    assert response.status == 422
    page.wait_for_selector("#acc-problem:not([hidden])")
    assert "adc.bits" in page.inner_text("#acc-problem")
    assert bits.get_attribute("aria-invalid") == "true"
    assert SUMMARY.match(page.inner_text("#acc-summary").strip())
    _recomputed(page, lambda: bits.fill("16"))
    page.wait_for_selector("#acc-problem", state="hidden")

    # A part brings its own tolerances and dissipation constant.
    _recomputed(page, lambda: page.select_option("#acc-part", "demo-pt100"))
    assert page.input_value('[name="tolerances.sensor_pct"]') == "0.12"
    assert page.input_value('[name="dissipation_w_per_k"]') == "4"
    assert page.locator('[name="tolerances.beta_pct"]').is_hidden()
    expect(page.locator("#acc-summary")).to_contain_text("from 0 to 100 °C")
    # The one 422 asked for above is the only console line (Chromium logs every failed request).
    assert [e for e in log.console_errors if "status of 422" not in e] == [] and len(log.console_errors) == 1
    assert log.page_errors == []
    assert log.outside() == []


def test_budget_csv_twin_downloads(browser, live_server):
    page, log = _open(browser, live_server)
    with page.expect_download() as info:
        page.click("#acc-csv")
    text = Path(info.value.path()).read_text(encoding="utf-8")
    lines = text.splitlines()
    assert lines[0].startswith('"# error budget') and lines[1].startswith("stimulus,resolution,quantization,worst_case")
    assert len(lines) == 2 + 101
    with page.expect_download() as info:
        page.click("#acc-errors-title >> xpath=.. >> [data-twin=csv]")
    assert Path(info.value.path()).read_text(encoding="utf-8").startswith("trace,")
    assert log.outside() == []


def test_page_fits_a_phone(browser, live_server):
    page, log = _open(browser, live_server, viewport=(390, 844))
    width = page.evaluate("document.documentElement.scrollWidth")
    assert width <= 390
    assert SUMMARY.match(page.inner_text("#acc-summary").strip())
    assert log.console_errors == [] and log.page_errors == []


def test_bench_accuracy_card_and_handover(browser, live_server):
    # The Bench's objective "accuracy" with the module static/js/accuracy_objective.js
    # (added here as the Bench page will load it) shows the settings and the budget.
    page, log = open_page(browser)
    page.goto(f"{live_server.url}/")
    page.wait_for_selector("#bench-output .main-svg")
    page.add_script_tag(url="/static/js/accuracy_objective.js", type="module")
    page.wait_for_function("() => window.ohmpickAccuracyExtras !== undefined")
    assert page.evaluate("() => window.ohmpickAccuracyExtras.get()") is None  # swing: nothing to add
    page.select_option("#bench-objective", "accuracy")
    expect(page.locator("#bench-accuracy-summary")).to_contain_text("worst case from 0 to 100 °C")
    extras = page.evaluate("() => window.ohmpickAccuracyExtras.get()")
    assert extras["adc"] == {"bits": 12, "ratiometric": True}
    assert extras["tolerances"]["beta_pct"] == 1 and extras["dissipation_w_per_k"] == pytest.approx(0.0015)
    href = page.get_attribute("#bench-accuracy-link", "href")
    assert href.startswith("/accuracy#inputs=")
    page.goto(f"{live_server.url}{href}")
    for plot in PLOTS:
        page.wait_for_selector(f"#{plot} .main-svg")
    expect(page.locator("#acc-facts")).to_contain_text("your value")
    assert page.input_value('[name="dissipation_w_per_k"]') == "1.5"
    assert log.console_errors == [] and log.page_errors == []
    assert log.outside() == []


def test_bench_ranks_by_accuracy_with_the_cards_inputs(browser, live_server):
    """The accuracy objective on the Bench: the card's converter feeds the ranking, and a
    loaded design brings its own converter and tolerances back into the card."""
    page, log = open_page(browser)
    page.goto(f"{live_server.url}/")
    page.wait_for_selector("#bench-output .main-svg")
    page.select_option("#bench-objective", "accuracy")
    expect(page.locator("#bench-accuracy-summary")).to_contain_text("worst case")
    inputs = page.evaluate("() => window.ohmpickBench.getInputs()")
    assert inputs["objective"] == "accuracy" and inputs["adc"]["bits"] == 12
    design = dict(inputs, adc={"bits": 16, "ratiometric": True}, tolerances={"fixed_pct": 0.1, "sensor_pct": 0.5})
    page.evaluate("(d) => window.ohmpickBench.load(d)", design)
    expect(page.locator('[data-field="adc.bits"]')).to_have_value("16")
    expect(page.locator('[data-field="tolerances.fixed_pct"]')).to_have_value("0.1")
    page.wait_for_function("() => window.ohmpickBench.last().inputs.adc && window.ohmpickBench.last().inputs.adc.bits === 16")
    result = page.evaluate("() => window.ohmpickBench.last().result")
    assert result["solve"]["objective"] == "accuracy" and result["recommended"]["fixed_ohm"] > 0
    assert log.console_errors == [] and log.page_errors == [] and log.outside() == []
