"""The demo's reports opened in a real browser (headless Chromium, network off).

Each report must load with no console error and no request other than the file itself, draw
every chart at a size above zero, paint a page that is not blank, print to A4 with a page per
section, and weigh under 5 MB.
"""
from __future__ import annotations

import io
import re

import pytest
from PIL import Image, ImageStat

MAX_BYTES = 5 * 1024 * 1024
# A page or chart of one colour has a pixel standard deviation of 0; text and charts on white
# measure in the tens. A few units would already be a faint smudge on an empty page.
MIN_SPREAD = 8.0
REPORTS = ("monitor", "diff", "pack", "pack_two_versions", "fit", "fit_penalised")


def grey_spread(png: bytes) -> float:
    return ImageStat.Stat(Image.open(io.BytesIO(png)).convert("L")).stddev[0]


@pytest.fixture
def opened(chromium, demo_reports, request):
    """The report named by the test's parameter, opened offline at 1280 px wide; with what it asked for."""
    path = demo_reports.all[request.param]
    context = chromium.new_context(offline=True, viewport={"width": 1280, "height": 900}, java_script_enabled=False)
    page = context.new_page()
    requests, errors = [], []
    page.on("request", lambda r: requests.append(r.url))
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.route("**/*", lambda route: route.continue_() if route.request.url.startswith("file:") else route.abort())
    url = path.resolve().as_uri()
    page.goto(url, wait_until="load")
    yield path, url, page, requests, errors
    context.close()


@pytest.mark.parametrize("opened", REPORTS, indirect=True)
def test_report_loads_alone_and_without_errors(opened):
    path, url, page, requests, errors = opened
    assert errors == []
    assert requests == [url], f"requests other than the file itself: {[r for r in requests if r != url]}"
    assert path.stat().st_size < MAX_BYTES


@pytest.mark.parametrize("opened", REPORTS, indirect=True)
def test_every_chart_is_drawn_at_a_size(opened):
    _, _, page, _, _ = opened
    charts = page.query_selector_all("figure .chart svg")
    assert len(charts) >= 3
    for chart in charts:
        box = chart.bounding_box()
        assert box is not None and box["width"] > 100 and box["height"] > 50, chart.get_attribute("aria-label")
        assert grey_spread(chart.screenshot()) > MIN_SPREAD, chart.get_attribute("aria-label")


@pytest.mark.parametrize("opened", REPORTS, indirect=True)
def test_page_is_not_blank_and_fits_the_width(opened):
    _, _, page, _, _ = opened
    assert grey_spread(page.screenshot(full_page=True)) > MIN_SPREAD
    # nothing wider than the window: no sideways scrolling at 1280 px
    assert page.evaluate("document.documentElement.scrollWidth") <= 1280


@pytest.mark.parametrize("opened", REPORTS, indirect=True)
def test_report_prints_on_a4_a_page_per_section(opened):
    _, _, page, _, _ = opened
    sections = len(page.query_selector_all("section"))
    pdf = page.pdf(format="A4", print_background=True)
    assert pdf.startswith(b"%PDF")
    pages = len(re.findall(rb"/Type\s*/Page[^s]", pdf))  # page objects, not the /Pages tree
    assert pages >= sections
