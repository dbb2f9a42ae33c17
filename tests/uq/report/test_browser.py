"""Both demo reports in a real headless browser (Chromium), at 1,400 px, at 400 px and printed.

Asserts what a reader sees: no console errors, no page-level horizontal overflow (document
width equals the viewport width), every section present, every figure decoded, and the
printed A4 PDF's first page carrying the verdict and the plan. The browser is driven over
the Chrome DevTools protocol on a pipe (``headless.py``, no third-party client). Skipped,
with the reason, only where no Chromium-family browser is installed (.ci/run installs
Debian's ``chromium``).
"""
from __future__ import annotations

import re

import pytest

from uq.report import write_report
from uq.report.writer import SECTION_IDS
from uq.scenario import load_scenario
from uq.scenario.demos import DEMOS, demo_path
from uq.studies.assess import assess

from .headless import Browser, find_browser

pytestmark = pytest.mark.slow

BROWSER = find_browser()
needs_browser = pytest.mark.skipif(
    BROWSER is None, reason="no Chromium-family browser found (apt-get install chromium, or "
                            "set TRANSIT_RISK_BROWSER)")
OPTIONAL = ("sweep", "comparison", "glide-polar")
WIDTHS = (1400, 400)
PAGE = """({
  documentWidth: document.documentElement.scrollWidth,
  viewportWidth: window.innerWidth,
  sections: [...document.querySelectorAll('section[id]')].map(s => s.id),
  images: [...document.images].map(i => ({alt: i.alt, complete: i.complete, width: i.naturalWidth})),
  widest: [...document.querySelectorAll('body *')].filter(e => e.getBoundingClientRect().right > window.innerWidth + 0.5).map(e => e.tagName + '.' + e.className).slice(0, 5)
})"""


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    """The two demo reports, small samples (the browser checks layout, not statistics)."""
    out = {}
    for kind in ("propeller", "glider"):
        with demo_path(DEMOS[kind]) as path:
            scenario = load_scenario(path)
        a = assess(scenario, samples=512, sensitivity_base_n=32, replicates=8)
        folder = write_report(a, tmp_path_factory.mktemp(kind) / "report")
        out[kind] = (a, folder)
    return out


@pytest.fixture(scope="module")
def browser():
    if BROWSER is None:
        pytest.skip("no Chromium-family browser found")
    with Browser(BROWSER) as b:
        yield b


@needs_browser
def test_the_harness_sees_errors_and_overflow(browser, tmp_path):
    # the checks below must be able to fail: a page with a console error, a broken image
    # and a too-wide box is caught on each count
    page = tmp_path / "bad.html"
    page.write_text('<!DOCTYPE html><html><body><div style="width: 2000px">wide</div>'
                    '<img src="data:image/png;base64,AAAA" alt="broken">'
                    '<script>console.error("deliberate")</script></body></html>')
    session = browser.open(page.as_uri(), width=400)
    info = browser.evaluate(session, PAGE)
    assert info["documentWidth"] > info["viewportWidth"]
    assert info["images"][0]["width"] == 0
    assert any("deliberate" in e for e in browser.errors(session))


@needs_browser
@pytest.mark.parametrize("kind", ["propeller", "glider"])
@pytest.mark.parametrize("width", WIDTHS)
def test_report_renders_without_errors_or_overflow(reports, browser, kind, width):
    a, folder = reports[kind]
    html = (folder / "index.html").read_text(encoding="utf-8")
    session = browser.open((folder / "index.html").as_uri(), width=width)
    info = browser.evaluate(session, PAGE)
    assert browser.errors(session) == []
    assert info["viewportWidth"] == width
    assert info["documentWidth"] == width, info["widest"]
    expected = [s for s in SECTION_IDS if s not in OPTIONAL]
    if a.scenario.vehicle.kind == "glider":
        expected.append("glide-polar")
    assert set(expected) <= set(info["sections"])
    assert info["sections"][:3] == ["verdict", "plan", "energy"]  # what the board reads first
    assert len(info["images"]) == html.count("<img ") > 0
    for image in info["images"]:
        assert image["complete"] and image["width"] > 0, image["alt"]


@needs_browser
@pytest.mark.parametrize("kind", ["propeller", "glider"])
def test_printed_first_page_has_the_verdict_and_the_plan(reports, browser, kind, tmp_path):
    pypdf = pytest.importorskip("pypdf")
    a, folder = reports[kind]
    session = browser.open((folder / "index.html").as_uri(), width=1400)
    pdf = tmp_path / "report.pdf"
    pdf.write_bytes(browser.print_pdf(session))
    reader = pypdf.PdfReader(str(pdf))
    box = reader.pages[0].mediabox
    # ISO 216: A4 is 210 x 297 mm = 595.3 x 841.9 pt (1 pt = 1/72 in)
    assert float(box.width) == pytest.approx(595.3, abs=1.5)
    assert float(box.height) == pytest.approx(841.9, abs=1.5)
    first = re.sub(r"\s+", " ", reader.pages[0].extract_text())
    word = {"go": "GO", "no-go": "NO-GO", "undecided": "UNDECIDED"}[a.verdict.verdict]
    assert re.search(rf"\b{word}\b", first)
    assert "P(success)" in first and "The plan being judged" in first
    for leg in a.scenario.legs:  # the whole route table
        assert leg.name in first
    assert "Decision settings" in first and "Nominal energy" in first
    assert len(reader.pages) > 1
