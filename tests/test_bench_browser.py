"""The Bench page in real Chromium against a real server (one browser and one server per module).

Each test opens a fresh page, checks every request it made stayed on
127.0.0.1 and that nothing went to the console as an error.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from tests.live import open_page

pytestmark = pytest.mark.browser

# Chromium reports every 4xx answer to fetch() on the console; a refused bad
# value is such an answer and expected where a test provokes one.
REFUSED = "the server responded with a status of 422"


@pytest.fixture(scope="module")
def context(browser):
    """One browser context for the module: plotly.js is parsed once and then comes from its cache."""
    ctx = browser.new_context(viewport={"width": 1366, "height": 768}, accept_downloads=True)
    yield ctx
    ctx.close()


@pytest.fixture
def bench(context, live_server):
    page, log = open_page(None, context=context)
    page.goto(live_server.url + "/")
    page.wait_for_function("() => document.querySelector('#bench-output')?.data?.length > 0")
    # Count the page's recomputes so tests can wait for the next one.
    page.evaluate("""() => { window.__results = 0;
        document.addEventListener('bench:result', () => { window.__results += 1; }); }""")
    yield page, log
    outside = log.outside()
    page.close()
    assert outside == [], f"requests left 127.0.0.1: {outside}"


def recomputed(page, action):
    """Run ``action`` and wait until the page has drawn the new result."""
    before = page.evaluate("() => window.__results")
    action()
    page.wait_for_function(f"() => window.__results > {before}", timeout=10_000)


def trace_y(page, plot="bench-output", index=0):
    return page.evaluate(f"() => Array.from(document.getElementById('{plot}').data[{index}].y)")


def no_errors(log, allowed=()):
    unexpected = [m for m in log.console_errors if not any(a in m for a in allowed)]
    assert unexpected == [] and log.page_errors == [], (unexpected, log.page_errors)


def test_home_loads_the_demo_and_draws_points(bench):
    page, log = bench
    assert page.title().startswith("Bench")
    assert page.text_content("#bench-value") == "4.7 kΩ"
    assert page.input_value('[name="range.max"]') == "100"
    ys = trace_y(page)
    assert len(ys) > 100 and all(0 < y < 3.3 for y in ys)
    # The SVG really holds a drawn line, not just data on the element.
    assert len(page.get_attribute("#bench-output .scatterlayer .trace path.js-line", "d") or "") > 100
    assert page.locator("#bench-sensitivity .scatterlayer .trace").count() >= 1
    assert "Output (V)" in page.text_content("#bench-output")
    assert "Temperature (°C)" in page.text_content("#bench-output")
    assert page.locator("#bench-runners-table tbody tr").count() >= 3
    assert page.locator("#bench-extras").count() == 1
    no_errors(log)


def test_changing_the_range_changes_the_pick_and_the_plot(bench):
    page, log = bench
    before_value, before_y = page.text_content("#bench-value"), trace_y(page)
    # 0..40 °C: the swing optimum moves to sqrt(R(0)·R(40)) ≈ 13.2 kΩ (beta model closed form).
    recomputed(page, lambda: page.fill('[name="range.max"]', "40"))
    after_value = page.text_content("#bench-value")
    assert after_value != before_value and after_value in ("13 kΩ", "12 kΩ")
    xs = page.evaluate("() => Array.from(document.getElementById('bench-output').data[0].x)")
    assert xs[0] == 0 and xs[-1] == 40
    assert trace_y(page) != before_y
    assert "40 °C" in page.text_content("#bench-facts")
    no_errors(log)


def test_an_override_of_4k7_is_evaluated_beside_the_pick(bench):
    page, log = bench
    recomputed(page, lambda: page.fill('[name="override_ohm"]', "10k"))
    assert page.is_visible("#bench-compare")
    recomputed(page, lambda: page.fill('[name="override_ohm"]', "4k7"))
    table = page.text_content("#bench-compare-table")
    assert "4.7 kΩ" in table and "Yours" in table
    names = page.evaluate("() => document.getElementById('bench-output').data.map(t => t.name)")
    assert "4.7 kΩ (yours)" in names
    recomputed(page, lambda: page.click("#bench-clear-override"))
    assert not page.is_visible("#bench-compare")
    no_errors(log)


def test_a_bad_value_is_marked_inline_and_the_last_plot_stays(bench):
    page, log = bench
    good = trace_y(page)
    with page.expect_response(lambda r: r.url.endswith("/api/view/bench")) as answer:
        page.fill('[name="circuit.load_ohm"]', "lots")
    assert answer.value.status == 422
    page.wait_for_selector('[name="circuit.load_ohm"][aria-invalid="true"]')
    note = page.locator('label:has([name="circuit.load_ohm"]) .field-error').text_content()
    assert "cannot read 'lots' as a resistance" in note
    assert page.is_visible("#bench-problem")
    assert "circuit.load_ohm" in page.text_content("#bench-problem")
    assert trace_y(page) == good and page.text_content("#bench-value") == "4.7 kΩ"
    # Fixing the value clears the mark and recomputes.
    recomputed(page, lambda: page.fill('[name="circuit.load_ohm"]', "100k"))
    assert page.get_attribute('[name="circuit.load_ohm"]', "aria-invalid") is None
    assert not page.is_visible("#bench-problem")
    no_errors(log, allowed=[REFUSED])


def test_an_inverted_range_marks_the_upper_end(bench):
    page, log = bench
    page.fill('[name="range.min"]', "120")
    page.wait_for_selector('[name="range.max"][aria-invalid="true"]')
    assert "must be above range.min" in page.text_content("#bench-problem")
    no_errors(log, allowed=[REFUSED])


def test_a_bad_limit_unfolds_the_limits_and_marks_the_field(bench):
    page, log = bench
    assert not page.is_visible('[name="limits.max_ohm"]')  # folded away at first
    page.evaluate("""() => window.ohmpickBench.load({ sensor: { part: 'demo-ntc-10k-b3950' },
        circuit: { supply_v: 3.3 }, range: { min: 0, max: 100 }, objective: 'swing', series: 'E24',
        limits: { min_ohm: '1M', max_ohm: '1k' } })""")
    page.wait_for_selector('[name="limits.max_ohm"][aria-invalid="true"]')
    assert page.is_visible('[name="limits.max_ohm"]')
    assert page.is_visible("#bench-stale")
    no_errors(log, allowed=[REFUSED])


def test_own_light_sensor_gets_a_log_lux_axis(bench):
    page, log = bench
    recomputed(page, lambda: page.select_option("#bench-part", ""))
    recomputed(page, lambda: page.select_option("#bench-kind", "ldr"))
    assert page.input_value('[name="range.min"]') == "1"
    layout_type = page.evaluate("() => document.getElementById('bench-output').layout.xaxis.type")
    assert layout_type == "log"
    assert "lux" in page.text_content('label:has([name="range.min"])')
    assert "V/decade" in page.text_content("#bench-facts")
    no_errors(log)


def test_a_divider_pot_shows_its_curves_and_chooses_nothing(bench):
    page, log = bench
    recomputed(page, lambda: page.select_option("#bench-part", "demo-pot-10k-linear"))
    recomputed(page, lambda: page.fill('[name="circuit.load_ohm"]', "10k"))
    assert page.text_content("#bench-headline-title") == "No fixed resistor to choose"
    assert page.locator('#bench-notices [data-code="divider"]').count() == 1
    assert not page.is_visible("#bench-runners") and not page.is_visible("#bench-problem")
    names = page.evaluate("() => document.getElementById('bench-output').data.map(t => t.name)")
    assert names == ["with 10 kΩ load", "unloaded"]
    no_errors(log)


def test_plot_twins_download_the_plotted_data(bench):
    page, log = bench
    with page.expect_download() as got:
        page.click('#bench-output-title ~ .twins [data-twin="csv"]')
    lines = Path(got.value.path()).read_text(encoding="utf-8").splitlines()
    assert lines[0] == "trace,Temperature (°C),Output (V)"
    assert lines[1].startswith("4.7 kΩ (best),0,")
    assert len(lines) > 201
    with page.expect_download() as got:
        page.click('#bench-sensitivity-title ~ .twins [data-twin="json"]')
    twin = json.loads(Path(got.value.path()).read_text(encoding="utf-8"))
    assert twin["traces"][0]["name"] == "4.7 kΩ (best)" and len(twin["traces"][0]["y"]) > 100
    no_errors(log)


def test_hooks_for_other_pages(bench):
    page, log = bench
    inputs = page.evaluate("() => window.ohmpickBench.getInputs()")
    assert inputs["sensor"] == {"part": "demo-ntc-10k-b3950"}
    assert inputs["range"] == {"min": 0, "max": 100} and inputs["series"] == "E24"
    detail = page.evaluate("""() => new Promise(done => {
        document.addEventListener('bench:result', e => done(e.detail), { once: true });
        window.ohmpickBench.load({ name: 'copy', sensor: { kind: 'rtd', r0_ohm: '1k' },
            circuit: { supply_v: 5, sensor_at: 'top', fixed_ohm: '2k2' }, range: { min: -20, max: 150 },
            objective: 'linearity', series: 'E96', limits: { max_sensor_power_w: 0.001 }, notes: 'ignored' });
    })""")
    assert detail["inputs"]["sensor"]["kind"] == "rtd"
    assert detail["inputs"]["override_ohm"] == "2k2"  # a resistor saved in the circuit is compared
    assert detail["inputs"]["limits"]["max_sensor_power_w"] == pytest.approx(0.001)
    assert detail["result"]["override"]["fixed_ohm"] == 2200
    assert page.input_value('[name="limits.max_sensor_power_w"]') == "1"  # shown in mW
    no_errors(log)


def test_copy_of_a_missing_saved_design_says_so(context, live_server):
    page, log = open_page(None, context=context)
    page.goto(live_server.url + "/?copy=no-such-design")
    page.wait_for_selector('.notice[data-code="copy"]')
    assert "No saved design" in page.text_content('.notice[data-code="copy"]')
    assert page.text_content("#bench-value") == "4.7 kΩ"  # the demo stays
    assert log.outside() == []
    assert [m for m in log.console_errors if "status of 404" not in m] == []
    page.close()


def test_keyboard_reaches_the_override_and_every_control_is_labelled(bench):
    page, log = bench
    unlabelled = page.evaluate("""() => [...document.querySelectorAll('#bench-form input, #bench-form select')]
        .filter(el => !el.closest('label') && !el.getAttribute('aria-label')).map(el => el.name)""")
    assert unlabelled == []
    page.focus('[name="range.max"]')
    for _ in range(30):
        page.keyboard.press("Tab")
        if page.evaluate("() => document.activeElement.name") == "override_ohm":
            break
    else:
        pytest.fail("Tab never reached the override field")
    recomputed(page, lambda: page.keyboard.type("4k7"))
    assert page.is_visible("#bench-compare")
    no_errors(log)


def test_phone_width_stacks_without_sideways_scrolling(browser, live_server):
    page, log = open_page(browser, viewport=(390, 844))
    page.goto(live_server.url + "/")
    page.wait_for_function("() => document.querySelector('#bench-output')?.data?.length > 0")
    width = page.evaluate("() => document.documentElement.scrollWidth")
    assert width <= 390
    form_box, results_box = page.locator("#bench-form").bounding_box(), page.locator("#bench-results").bounding_box()
    assert results_box["y"] > form_box["y"] + form_box["height"] - 1  # stacked, not side by side
    assert log.outside() == [] and log.console_errors == []
    page.context.close()
