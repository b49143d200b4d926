"""The demo's HTML report in a real browser: Debian's headless Chromium opens it from a
``file://`` URL with the network blocked.

Outside sources: the Chrome DevTools Protocol (Network.requestWillBeSent is sent for every
request the page makes, file and data URLs included; Runtime.consoleAPICalled,
Runtime.exceptionThrown and Log.entryAdded carry console errors, uncaught exceptions and
failed loads); the PNG images Chromium writes, read with Pillow (PyPI).

Skipped with the reason when no Chromium is installed (``.ci/run`` installs Debian's
``chromium`` package where it is missing).
"""

from __future__ import annotations

import io
import json
import re

import pytest

from schemcheck.report.figures import element_id
from schemcheck.report.formats import render
from schemcheck.run.batch import audit_paths

from .browser import Browser, find_chromium
from .conftest import FIXTURES

CHROMIUM = find_chromium()
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="headless Chromium not found (Debian package 'chromium': "
                             "apt-get install -y chromium; .ci/run installs it)")


@pytest.fixture(scope="module")
def demo_page(tmp_path_factory):
    report = audit_paths([str(FIXTURES / "demo" / "frontend.kicad_sch")],
                         overrides={"charts": True}, jobs=1)
    path = tmp_path_factory.mktemp("report") / "frontend.dc-report.html"
    path.write_text(render(report, "html"), encoding="utf-8")
    return path, report


def test_demo_report_in_chromium(demo_page):
    from PIL import Image, ImageStat

    path, report = demo_page
    stages = report["designs"][0]["stages"]
    solved = [s["id"] for s in stages if "over_temperature" in s]
    assert solved == ["U1/1", "U2/1", "U4/1", "U4/2"]  # fixtures/README.md: U3/1 not solved
    wanted = ([element_id("bar", 1, s["id"]) for s in stages]
              + [element_id(kind, 1, name) for name in solved for kind in ("curve", "hist")]
              + [element_id("box", 1, "U4/1"), element_id("box", 1, "U4/2")])
    with Browser(CHROMIUM) as browser:
        browser.open(path.as_uri())
        boxes = browser.evaluate(
            f"JSON.stringify({json.dumps(wanted)}.map(id => {{"
            " const e = document.getElementById(id); if (!e) return [id, 0, 0];"
            " const r = e.getBoundingClientRect(); return [id, r.width, r.height]; }))")
        title = browser.evaluate("document.title")
        shot = browser.screenshot()
        pdf = browser.pdf()
        requests = browser.requests()
        errors = browser.errors()
    assert errors == []
    assert requests == [path.as_uri()]  # the page itself and nothing else
    assert title == "DC error report: fixtures/demo/frontend.kicad_sch"
    # every stage's bar and every solved stage's curve and histogram is drawn (has a size)
    missing = [(i, w, h) for i, w, h in json.loads(boxes) if w <= 0 and h <= 0]
    assert missing == []
    image = Image.open(io.BytesIO(shot)).convert("L")
    assert image.size == (1200, 1000)
    stats = ImageStat.Stat(image)
    # not blank: a white page has no spread; the report's header band, text and cards do
    assert stats.stddev[0] > 25
    histogram = image.histogram()
    assert sum(histogram[:200]) > 0.05 * image.size[0] * image.size[1]
    # printed: a PDF of several A4 pages (PDF 1.7, ISO 32000-1: one /Type /Page per page)
    assert pdf.startswith(b"%PDF") and len(re.findall(rb"/Type\s*/Page(?!s)", pdf)) >= 2
