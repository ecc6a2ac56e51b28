"""The Parts shelf and Compare pages in a real Chromium (Debian's, via Playwright).

Every test checks that the page logged no console or page errors and that
no request left 127.0.0.1.
"""

from __future__ import annotations

import pytest

from tests.live import open_page

pytestmark = pytest.mark.browser

THREE = ("demo-ntc-10k-sh", "demo-pt100", "demo-ntc-100k-b4250")
TABLE = "temperature_c, resistance\n0, 32.65k\n25, 10k\n50, 3.6k\n70, 1.75k\n"


def _clean(log, refused: int | None = None):
    """No errors and nothing outside. ``refused``: the status a test provoked on purpose
    (a 422 for bad input), whose resource line Chromium logs as an error; nothing else passes."""
    expected = f"the server responded with a status of {refused}" if refused else None
    errors = [e for e in log.console_errors if not (expected and e.startswith("Failed to load resource") and expected in e)]
    assert errors == [] and log.page_errors == []
    assert log.outside() == []


def _rows(page):
    return page.eval_on_selector_all("#metrics-rows tr", "rows => rows.map(r => [...r.cells].map(c => c.textContent))")


def _traces(page, plot_id):
    return page.evaluate(f"document.getElementById('{plot_id}').data.map(t => t.name)")


def _wait_rows(page, names):
    page.wait_for_function(
        "names => { const cells = [...document.querySelectorAll('#metrics-rows tr td:first-child')].map(c => c.textContent);"
        " return cells.length === names.length && names.every(n => cells.includes(n)); }", arg=names)


def test_compare_three_parts_sort_by_worst_sensitivity(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/compare")
    page.wait_for_selector("body[data-ready='1']")
    names = {p["id"]: p["name"] for p in page.evaluate("fetch('/api/parts').then(r => r.json())")}
    selects = page.locator("#sensor-rows select")
    while selects.count() < 3:
        page.click("#add-sensor")
    for i, part in enumerate(THREE):
        selects.nth(i).select_option(part)
    wanted = [names[p] for p in THREE]
    _wait_rows(page, wanted)

    for plot in ("output-plot", "slope-plot", "resolution-plot"):
        assert _traces(page, plot) == wanted  # three overlaid traces, in the order given

    button = page.locator("#metrics-head button[data-sort='sensitivity']")
    assert button.inner_text().startswith("Worst sensitivity")
    button.focus()
    page.keyboard.press("Enter")  # the sort is a real button: the keyboard works it
    page.wait_for_selector("#metrics-head th[aria-sort='ascending'] [data-sort='sensitivity']")
    header = page.eval_on_selector_all("#metrics-head th", "ths => ths.map(t => t.textContent)")
    col = next(i for i, h in enumerate(header) if h.startswith("Worst sensitivity"))
    column = [float(r[col]) for r in _rows(page)]
    assert column == sorted(column) and len(column) == 3
    page.keyboard.press("Enter")
    page.wait_for_selector("#metrics-head th[aria-sort='descending'] [data-sort='sensitivity']")
    column = [float(r[col]) for r in _rows(page)]
    assert column == sorted(column, reverse=True)
    # Sorting the table leaves the plots alone.
    assert _traces(page, "output-plot") == wanted
    _clean(log)
    page.context.close()


def test_shared_resistor_and_a_mix_of_kinds(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/compare?parts=demo-ntc-10k-b3950,demo-pt1000")
    page.wait_for_selector("body[data-ready='1']")
    page.check("input[name=mode][value=shared]")
    page.fill("input[name='circuit.fixed_ohm']", "4k7")
    page.wait_for_function("() => [...document.querySelectorAll('#metrics-rows tr td:nth-child(2)')]"
                           ".every(td => td.textContent === '4.7 kΩ')")
    assert "shared" in page.inner_text("#metrics-head")
    page.locator("#sensor-rows select").nth(1).select_option("demo-ldr-small")  # light beside temperature
    page.wait_for_selector("#problem:not([hidden])")
    assert "light sensor (lux)" in page.inner_text("#problem")
    assert page.get_attribute("#sensor-rows select >> nth=1", "aria-invalid") == "true"
    _clean(log, refused=422)
    page.context.close()


def test_light_comparison_switches_units_and_shows_the_caution(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/compare?parts=demo-ldr-small,demo-ldr-dim")
    page.wait_for_selector("body[data-ready='1']")
    assert page.inner_text(".range-unit >> nth=0") == "lux"
    assert page.is_visible("#mains-caution")
    assert _traces(page, "output-plot") == page.eval_on_selector_all(
        "#metrics-rows tr td:first-child", "cells => cells.map(c => c.textContent)")
    _clean(log)
    page.context.close()


def test_share_a_comparison_and_open_the_link(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/compare?parts=" + ",".join(THREE))
    page.wait_for_selector("body[data-ready='1']")
    page.fill("#share-form input[name=name]", "Three probes")
    page.click("#share-form button[type=submit]")
    link = page.wait_for_selector("#share-result a").get_attribute("href")
    page.goto(link)
    assert page.inner_text("#design-name") == "Three probes"
    page.wait_for_function("() => document.getElementById('plot-output') && document.getElementById('plot-output').data")
    assert len(_traces(page, "plot-output")) == 3
    page.click("#open-copy")
    page.wait_for_function("() => document.querySelectorAll('#metrics-rows tr').length === 3")
    chosen = page.eval_on_selector_all("#sensor-rows select", "s => s.map(x => x.value)")
    assert chosen == list(THREE)
    assert page.input_value("#share-form input[name=name]") == "Three probes"
    _clean(log)
    page.context.close()


def test_import_a_table_fit_save_export_and_delete(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/shelf")
    page.fill("#import-csv", TABLE)
    page.select_option("#import-model", "ntc_sh")
    page.click("#import-form button[type=submit]")
    page.wait_for_selector("#import-result:not([hidden])")
    assert page.inner_text("#fit-error").startswith("largest error")
    page.wait_for_function("() => document.getElementById('residual-plot').data && document.getElementById('residual-plot').data[0].y.length === 4")
    page.fill("#save-form input[name=name]", "Chamber NTC")
    page.fill("#save-form input[name='tolerances.sensor_pct']", "1")
    page.click("#save-form button[type=submit]")
    page.wait_for_function("() => document.getElementById('detail-name').textContent === 'Chamber NTC'")
    assert "0 … 70" in page.inner_text("#detail-fitted")
    assert "± 1 %" in page.inner_text("#detail-extra")
    href = page.get_attribute("#export-toml", "href")
    assert href.startswith("/api/parts/user-chamber-ntc-") and href.endswith("/toml")
    toml = page.evaluate(f"fetch('{href}').then(r => r.text())")
    assert 'name = "Chamber NTC"' in toml and "[fitted]" in toml
    # Compared beyond its 0 … 70 °C table, the part's extrapolation is shown with its size.
    page.click("#compare-link")
    page.wait_for_selector("#warnings:not([hidden])")
    assert "30 °C above the 0 .. 70 °C range Chamber NTC was fitted over" in page.inner_text("#warnings")
    page.go_back()
    page.wait_for_function("() => document.getElementById('detail-name').textContent === 'Chamber NTC'")
    assert page.is_visible("#delete-part")
    page.click("#delete-part")
    assert page.inner_text("#delete-part") == "Press again to delete"
    page.click("#delete-part")
    page.wait_for_function("() => !document.querySelector('#part-rows').textContent.includes('Chamber NTC')")
    _clean(log)
    page.context.close()


def test_bad_table_and_bad_parameters_are_shown_at_the_field(live_server, browser):
    page, log = open_page(browser)
    page.goto(live_server.url + "/shelf")
    page.fill("#import-csv", "temperature_c,resistance\n0,32k\n25,-10k\n50,3k\n")
    page.click("#import-form button[type=submit]")
    page.wait_for_selector("#import-problem:not([hidden])")
    assert "line 3" in page.inner_text("#import-problem")
    assert page.get_attribute("#import-csv", "aria-invalid") == "true"

    page.fill("#create-form input[name=name]", "Odd bead")
    page.fill("#create-form input[name='sensor.r_nominal_ohm']", "10k")
    page.fill("#create-form input[name='sensor.beta_k']", "-3950")
    page.click("#create-form button[type=submit]")
    page.wait_for_selector("#create-problem:not([hidden])")
    assert page.get_attribute("#create-form [name='sensor.beta_k']", "aria-invalid") == "true"
    page.fill("#create-form input[name='sensor.beta_k']", "3950")
    page.fill("#create-form input[name='dissipation_mw_per_k']", "1.5")
    page.click("#create-form button[type=submit]")
    page.wait_for_function("() => document.getElementById('detail-name').textContent === 'Odd bead'")
    assert "1.5 mW/K" in page.inner_text("#detail-extra")
    assert page.evaluate("document.getElementById('curve-plot').layout.yaxis.type") == "log"
    _clean(log, refused=422)
    page.context.close()
