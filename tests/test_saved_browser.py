"""Saved designs in a real Chromium: share from the Bench, open elsewhere, export.

Two browser contexts are two people: separate storage, so the second one
has no owner token. Every page must keep its requests on 127.0.0.1.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import httpx
import pytest

from tests.live import open_page

pytestmark = pytest.mark.browser

XSS = "<script>alert(1)</script>"
INPUTS = {
    "sensor": {"part": "demo-ntc-10k-b3950"},
    "circuit": {"supply_v": 3.3, "sensor_at": "bottom"},
    "range": {"min": 0, "max": 100},
    "objective": "swing",
    "series": "E24",
}
PLOT_Y = "id => document.getElementById(id)._fig.data.map(t => t.y)"


def bench(page, url: str) -> None:
    page.goto(url)
    page.wait_for_selector("#share-save")
    page.wait_for_function("() => window.ohmpickBench && document.querySelector('#bench-output .main-svg')")


def recompute(page, action) -> None:
    with page.expect_response(lambda r: r.url.endswith("/api/view/bench") and r.status == 200):
        action()


def clean(log) -> None:
    assert log.outside() == []
    assert log.page_errors == []
    assert log.console_errors == []


def test_a_shared_link_shows_the_same_design_to_a_colleague(browser, live_server):
    alice, alice_log = open_page(browser)
    bench(alice, live_server.url + "/")
    recompute(alice, lambda: alice.fill('[name="range.max"]', "70"))
    alice.fill("#share-name", "Loop 2 NTC")
    alice.fill("#share-notes", "flow pipe, 0 to 70 °C")
    alice.click("#share-save")
    alice.wait_for_selector("#share-done", state="visible")
    link = alice.input_value("#share-link")
    assert re.fullmatch(re.escape(live_server.url) + r"/d/[A-Za-z0-9_-]{16}", link)
    recommended = alice.text_content("#bench-value").strip()
    alice_curves = alice.evaluate(PLOT_Y, "bench-output")
    token = alice.text_content("#share-token")
    assert len(token) >= 32

    bob, bob_log = open_page(browser)  # a separate context: no shared storage, no token
    assert bob.context is not alice.context
    bob.goto(link)
    bob.wait_for_selector("#plot-output .main-svg")
    assert bob.text_content("#design-name") == "Loop 2 NTC"
    assert "flow pipe, 0 to 70 °C" in bob.text_content("#design-notes")
    assert bob.text_content("#recommended .big").strip() == recommended
    bob_curves = bob.evaluate(PLOT_Y, "plot-output")
    assert bob_curves == alice_curves and len(bob_curves[0]) >= 100
    assert bob.is_hidden("#owner-panel") and bob.is_visible("#owner-claim")

    # Bob opens a copy on his own Bench: same inputs, his changes do not touch Alice's design
    bob.click("#open-copy")
    bob.wait_for_url(re.compile(r".*/\?copy="))
    bob.wait_for_function("() => document.querySelector('[name=\"range.max\"]').value === '70'")
    bob.wait_for_function(f"() => document.getElementById('bench-value').textContent.trim() === {json.dumps(recommended)}")
    assert bob.input_value("#share-name") == "Loop 2 NTC (copy)"

    # Alice owns it: she can rename it from its page; Bob's context cannot
    alice.goto(link)
    alice.wait_for_selector("#owner-panel", state="visible")
    alice.fill("#rename-name", "Loop 2 NTC, final")
    with alice.expect_response(lambda r: r.request.method == "PATCH" and r.status == 200):
        alice.click("#rename-form button[type=submit]")
    assert alice.text_content("#design-name") == "Loop 2 NTC, final"
    bob.goto(link)
    assert bob.text_content("#design-name") == "Loop 2 NTC, final"
    assert bob.is_hidden("#owner-panel")
    denied = httpx.delete(link.replace("/d/", "/api/designs/"))
    assert denied.status_code == 401
    clean(alice_log)
    clean(bob_log)
    alice.context.close()
    bob.context.close()


def test_a_script_for_a_name_shows_as_text_on_every_page(browser, live_server):
    page, log = open_page(browser)
    dialogs: list[str] = []
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    bench(page, live_server.url + "/")
    page.fill("#share-name", XSS)
    page.fill("#share-notes", f"notes {XSS}")
    page.click("#share-save")
    page.wait_for_selector("#share-done", state="visible")
    design_id = page.input_value("#share-link").rsplit("/", 1)[1]

    page.goto(live_server.url + "/designs")
    row = page.locator(f'#designs tr[data-id="{design_id}"]')
    assert row.locator("a").text_content() == XSS
    assert XSS in row.text_content()
    assert row.locator(".mine").is_visible()  # this browser saved it
    page.fill("#filter-name", "<script>")
    page.wait_for_function("() => document.querySelectorAll('#designs tbody tr').length === 1")
    assert page.locator("#designs tbody a").text_content() == XSS

    page.goto(live_server.url + "/designs?name=" + httpx.QueryParams({"q": "<script>"})["q"])
    assert page.locator(f'#designs tr[data-id="{design_id}"] a').text_content() == XSS
    assert page.input_value("#filter-name") == "<script>"

    page.goto(f"{live_server.url}/d/{design_id}")
    page.wait_for_selector("#plot-output .main-svg")
    assert page.text_content("#design-name") == XSS
    assert page.title().startswith(XSS)
    assert page.input_value("#rename-name") == XSS

    bench(page, f"{live_server.url}/?copy={design_id}")
    page.wait_for_function(f"() => document.getElementById('share-name').value === {json.dumps(XSS + ' (copy)')}")
    assert XSS in page.text_content("#bench-results")

    assert dialogs == []
    clean(log)
    page.context.close()


def test_plots_download_offline_and_a_design_file_imports_back(browser, live_server, tmp_path):
    made = httpx.post(live_server.url + "/api/designs", json={"name": "Export me", **INPUTS}).json()
    page, log = open_page(browser)
    page.goto(made["url"])
    page.wait_for_selector("#plot-output .main-svg")
    recommended = page.text_content("#recommended .big")

    page.context.set_offline(True)  # images are drawn in the browser; nothing is fetched
    for panel in ("plot-output", "plot-sensitivity"):
        for kind, magic in (("png", b"\x89PNG\r\n\x1a\n"), ("svg", b"<svg")):
            button = page.locator(f'section.plot-panel:has(#{panel}) [data-twin="{kind}"]')
            with page.expect_download() as info:
                button.click()
            download = info.value
            assert download.suggested_filename.endswith(f".{kind}")
            body = Path(download.path()).read_bytes()
            assert body.startswith(magic) if kind == "png" else magic in body[:400]
            assert len(body) > 2000
    page.context.set_offline(False)

    with page.expect_download() as info:
        page.click("#export-json")
    saved = tmp_path / info.value.suggested_filename
    info.value.save_as(saved)
    file = json.loads(saved.read_text())
    assert file["ohmpick_design"] == 1 and file["inputs"] == INPUTS and file["name"] == "Export me"

    page.goto(live_server.url + "/designs")
    page.set_input_files("#import-file", str(saved))
    page.click("#import-button")
    page.wait_for_url(re.compile(r".*/d/[A-Za-z0-9_-]{16}$"))
    assert not page.url.endswith(made["id"])
    page.wait_for_selector("#owner-panel", state="visible")  # the importer owns the new copy
    assert page.text_content("#recommended .big") == recommended

    # the Bench's share control writes the same file format and opens it back
    bench(page, live_server.url + "/")
    recompute(page, lambda: page.fill('[name="range.max"]', "60"))
    with page.expect_download() as info:
        page.click("#share-export")
    bench_file = tmp_path / "bench.ohmpick.json"
    info.value.save_as(bench_file)
    assert json.loads(bench_file.read_text())["inputs"]["range"]["max"] == 60
    recompute(page, lambda: page.fill('[name="range.max"]', "90"))
    recompute(page, lambda: page.set_input_files("#share-file", str(bench_file)))
    assert page.input_value('[name="range.max"]') == "60"
    clean(log)
    page.context.close()
