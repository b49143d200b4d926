"""Write ``fixtures/demo-report.png``, the picture of the demo's HTML report that the README
shows: ``python -m tests.make_screenshot`` (needs Debian's ``chromium``).

The demo is audited with its own settings and charts kept, rendered as HTML, opened in
headless Chromium (tests/browser.py) at 1100 px wide, and the part from the budget chart
to the end of the first stage is captured and reduced to 96 colours to stay small.
"""

from __future__ import annotations

import io
import sys
import tempfile
from pathlib import Path

from schemcheck.report.formats import render
from schemcheck.run.batch import audit_paths

from .browser import Browser, find_chromium

ROOT = Path(__file__).resolve().parents[1]
TARGET = ROOT / "fixtures" / "demo-report.png"


def main() -> int:
    from PIL import Image

    binary = find_chromium()
    if binary is None:
        print("headless Chromium not found (apt-get install -y chromium)", file=sys.stderr)
        return 2
    report = audit_paths([str(ROOT / "fixtures" / "demo" / "frontend.kicad_sch")],
                         overrides={"charts": True}, jobs=1)
    with tempfile.TemporaryDirectory() as folder:
        page = Path(folder) / "frontend.dc-report.html"
        page.write_text(render(report, "html"), encoding="utf-8")
        with Browser(binary, width=1100, height=900) as browser:
            browser.open(page.as_uri())
            top = browser.evaluate("document.getElementById('budget-chart-1')"
                                   ".getBoundingClientRect().top + window.scrollY - 8")
            bottom = browser.evaluate("document.getElementById('stage-1-U1-1')"
                                      ".getBoundingClientRect().bottom + window.scrollY + 8")
            shot = browser.screenshot({"x": 0, "y": top, "width": 1100,
                                       "height": bottom - top})
    image = Image.open(io.BytesIO(shot)).convert("RGB").quantize(96, dither=Image.Dither.NONE)
    image.save(TARGET, optimize=True)
    print(f"{TARGET.relative_to(ROOT)}: {image.size[0]}x{image.size[1]}, "
          f"{TARGET.stat().st_size // 1024} kB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
