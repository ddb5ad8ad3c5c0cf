"""The HTML report in a real browser (headless Chromium over its DevTools pipe): every sample design's page loads
without console errors or requests, every plot has a size, every finding link lands on its stage card, the page
fits the printable width of A4 and Letter and prints to PDF; a design carrying script text runs nothing.

Screenshots of each sample's page are kept in the test's tmp folder for a person to look at.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from browser_harness import Browser, needs_browser
from test_html_report import SAMPLES, hostile_design, html_of

pytestmark = [pytest.mark.browser, needs_browser]

# printable width at 96 px/in: A4 8.27 in and Letter 8.5 in, less the page's 12 mm margins on each side
PRINT_WIDTHS_PX = {"A4": int((8.27 - 2 * 12 / 25.4) * 96), "Letter": int((8.5 - 2 * 12 / 25.4) * 96)}
PAPER_IN = {"A4": (8.27, 11.69), "Letter": (8.5, 11.0)}

PLOT_SIZES = "Array.from(document.querySelectorAll('svg.plot')).map(s => {const r = s.getBoundingClientRect(); " \
             "return [r.width, r.height];})"
STAGE_LINKS = ("Array.from(document.querySelectorAll('article.finding a.to-stage')).map(a => {"
               "const t = document.getElementById(a.getAttribute('href').slice(1)); "
               "return [a.getAttribute('href'), t ? t.className : null];})")
OVERFLOW = ("(() => {const w = document.documentElement.clientWidth; "
            "const wide = Array.from(document.querySelectorAll('body *')).filter(e => "
            "e.getClientRects().length && e.getBoundingClientRect().right > w + 1).map(e => e.tagName + '.' + "
            "e.className); return [document.documentElement.scrollWidth, w, wide.slice(0, 5)];})()")


@pytest.fixture(scope="module")
def browser():
    with Browser() as b:
        yield b


@pytest.mark.slow
@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.name)
def test_sample_report_in_the_browser(browser: Browser, sample: Path, tmp_path: Path) -> None:
    page_file = tmp_path / f"{sample.stem}.html"
    page_file.write_text(html_of(sample), encoding="utf-8")
    page = browser.page(width=1000)
    page.open(page_file)
    assert page.console_errors() == []
    assert page.requests() == [page_file.resolve().as_uri()]  # nothing fetched beyond the file itself
    sizes = page.evaluate(PLOT_SIZES)
    assert sizes and all(w > 100 and h > 50 for w, h in sizes), sizes
    links = page.evaluate(STAGE_LINKS)
    assert all(cls == "stage" for _, cls in links), links
    assert page.evaluate("document.getElementById('filters').hidden") is False  # the script ran
    page.screenshot(tmp_path / f"{sample.stem}.png")
    assert (tmp_path / f"{sample.stem}.png").stat().st_size > 10_000
    page.send("Emulation.setEmulatedMedia", {"media": "print"})
    for paper, width in PRINT_WIDTHS_PX.items():
        page.send("Emulation.setDeviceMetricsOverride", {"width": width, "height": 1000, "deviceScaleFactor": 1,
                                                         "mobile": False})
        scroll, client, wide = page.evaluate(OVERFLOW)
        assert scroll <= client and wide == [], (paper, scroll, client, wide)
        pdf = page.print_pdf(*PAPER_IN[paper])
        assert pdf.startswith(b"%PDF") and pdf.count(b"/Type /Page") > 1
    assert page.console_errors() == []


@pytest.mark.slow
def test_filter_hides_findings_by_severity(browser: Browser, tmp_path: Path) -> None:
    page_file = tmp_path / "hydrophone.html"
    page_file.write_text(html_of(next(p for p in SAMPLES if p.stem == "hydrophone_preamp")), encoding="utf-8")
    page = browser.page()
    page.open(page_file)
    hidden = ("Array.from(document.querySelectorAll('article.finding')).filter(a => a.hidden)"
              ".map(a => a.dataset.severity)")
    assert page.evaluate(hidden) == []
    page.evaluate("(() => {const b = document.querySelector('input[data-severity=error]'); b.click(); return 1;})()")
    shown = page.evaluate("Array.from(document.querySelectorAll('article.finding')).filter(a => !a.hidden)"
                          ".map(a => a.dataset.severity)")
    assert set(page.evaluate(hidden)) == {"error"} and shown and "error" not in shown


def test_script_text_in_a_design_shows_as_text_and_runs_nothing(browser: Browser, tmp_path: Path) -> None:
    page_file = tmp_path / "hostile.html"
    page_file.write_text(html_of(hostile_design(tmp_path)), encoding="utf-8")
    page = browser.page()
    page.open(page_file)
    assert page.evaluate("typeof window.__xss") == "undefined"
    assert page.dialogs() == [] and page.console_errors() == []
    assert page.requests() == [page_file.resolve().as_uri()]  # the <img src=x> never became an element
    assert page.evaluate("document.querySelectorAll('script').length") == 1
    assert page.evaluate("document.querySelectorAll('img').length") == 0
    body = page.evaluate("document.body.innerText")
    assert "<script>window.__xss = 1</script>" in body and '<img src=x onerror="window.__xss=2">' in body
    assert page.evaluate("document.title").startswith("afecheck review: <script>")
    page.screenshot(tmp_path / "hostile.png")


@pytest.mark.slow
def test_page_reads_the_same_without_javascript(browser: Browser, tmp_path: Path) -> None:
    page_file = tmp_path / "soil.html"
    page_file.write_text(html_of(next(p for p in SAMPLES if p.stem == "soil_probe_reader")), encoding="utf-8")
    page = browser.page()
    page.send("Emulation.setScriptExecutionDisabled", {"value": True})
    page.open(page_file)
    page.send("Emulation.setScriptExecutionDisabled", {"value": False})  # to ask the page; it loaded without
    state = page.evaluate("[document.getElementById('filters').hidden, "
                          "Array.from(document.querySelectorAll('article.finding')).filter(a => a.hidden).length, "
                          "document.querySelectorAll('article.finding').length, "
                          "Array.from(document.querySelectorAll('svg.plot')).every(s => s.getBoundingClientRect()"
                          ".height > 50)]")
    assert state[0] is True and state[1] == 0 and state[2] == 3 and state[3] is True


@pytest.mark.slow
def test_noise_and_dc_error_panels_render_and_print_within_the_page(browser: Browser, tmp_path: Path) -> None:
    # the data-acquisition sample: three channels, each with a noise plot and DC-error worksheet per driven net
    page_file = tmp_path / "daq.html"
    page_file.write_text(html_of(next(p for p in SAMPLES if p.stem == "daq_front_end")), encoding="utf-8")
    page = browser.page(width=1000)
    page.open(page_file)
    assert page.console_errors() == []
    noise = page.evaluate("Array.from(document.querySelectorAll('figure[id$=\"-noise\"] svg.plot')).map(s => {"
                          "const r = s.getBoundingClientRect(); return [r.width, r.height];})")
    assert len(noise) == 6 and all(w > 100 and h > 50 for w, h in noise), noise
    tables = page.evaluate("Array.from(document.querySelectorAll('div.budget table.worksheet')).map(t => "
                           "[t.getBoundingClientRect().width, t.rows.length])")
    assert len(tables) >= 18 and all(w > 100 and rows > 1 for w, rows in tables), tables
    text = page.evaluate("document.getElementById('stage-1-2-net2').innerText")
    assert "RB3 tolerance" in text and "budget 20.0 µV" in text
    page.screenshot(tmp_path / "daq.png")
    page.send("Emulation.setEmulatedMedia", {"media": "print"})
    for paper, width in PRINT_WIDTHS_PX.items():
        page.send("Emulation.setDeviceMetricsOverride", {"width": width, "height": 1000, "deviceScaleFactor": 1,
                                                         "mobile": False})
        scroll, client, wide = page.evaluate(OVERFLOW)
        assert scroll <= client and wide == [], (paper, scroll, client, wide)
        assert page.print_pdf(*PAPER_IN[paper]).startswith(b"%PDF")
