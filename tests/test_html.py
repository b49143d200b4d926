"""The HTML report: self-contained, the Markdown's words and numbers, every stage's bar and
curve, through the CLI, the service and the editor action.

Outside sources: the HTML Living Standard (ids unique in a document; elements that load
a resource: ``src``, ``href`` on ``link``, ``srcset``, CSS ``url()`` and ``@import``);
SVG 1.1 (``xmlns`` names a namespace and loads nothing); the OpenAPI 3.0 specification,
checked with openapi-spec-validator (PyPI).
"""

from __future__ import annotations

import html
import json
import re
import sys
from html.parser import HTMLParser
from pathlib import Path

import pytest
from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.report.audit_text import finding_text, stage_details, temp_range
from schemcheck.report.figures import element_id
from schemcheck.report.formats import render
from schemcheck.run.batch import audit_paths

from .conftest import FIXTURES

ROOT = Path(__file__).resolve().parents[1]
DEMO = FIXTURES / "demo"
SOLVED = ["U1/1", "U2/1", "U4/1", "U4/2"]  # fixtures/README.md: U3/1 has no bias path


@pytest.fixture(scope="module")
def demo_report():
    return audit_paths([str(DEMO / "frontend.kicad_sch")], overrides={"charts": True}, jobs=1)


@pytest.fixture(scope="module")
def page(demo_report):
    return render(demo_report, "html")


class _Collect(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.ids: list[str] = []
        self.loads: list[tuple[str, str, str]] = []
        self.text: list[str] = []

    def handle_starttag(self, tag, attrs):
        for name, value in attrs:
            if name == "id":
                self.ids.append(value)
            if name in ("src", "srcset", "data", "poster", "background") or (
                    name == "href" and not (value or "").startswith("#")):
                self.loads.append((tag, name, value or ""))

    def handle_data(self, data):
        self.text.append(data)


def _parsed(text: str) -> _Collect:
    parser = _Collect()
    parser.feed(text)
    return parser


def test_page_loads_nothing_from_elsewhere(page):
    parsed = _parsed(page)
    assert parsed.loads == []
    assert "@import" not in page and "@font-face" not in page
    assert re.findall(r"url\((?!#)", page) == []  # only references inside the page
    # the only addresses are SVG namespace names, which load nothing
    addresses = set(re.findall(r"https?://[^\s\"')<>]+", page))
    assert addresses <= {"http://www.w3.org/2000/svg", "http://www.w3.org/1999/xlink"}
    assert len(page.encode()) < 3_000_000


def test_ids_are_unique_and_every_stage_has_its_bar_and_curve(page, demo_report):
    ids = _parsed(page).ids
    assert len(ids) == len(set(ids))
    found = set(ids)
    for s in demo_report["designs"][0]["stages"]:
        assert element_id("bar", 1, s["id"]) in found  # unsolved stages say why, in the row
    for name in SOLVED:
        for kind in ("curve", "hist"):
            assert element_id(kind, 1, name) in found
        assert element_id("curve", 1, name) + "-mc" in found
    assert element_id("box", 1, "U4/1") in found and element_id("box", 1, "U4/2") in found
    assert element_id("arrow", 1, "U4/1") + "-U4-2" in found


def test_same_words_and_numbers_as_the_markdown(page, demo_report):
    text = html.unescape(" ".join(_parsed(page).text))
    text = re.sub(r"\s+", " ", text)
    design = demo_report["designs"][0]
    for f in design["findings"]:
        assert finding_text(f) in text
        assert f["suggestion"] in text
    for s in design["stages"]:
        for label, line in stage_details(s, temp_range(design)):
            assert line in text, (s["id"], label)
    for a in design["assumptions"] + demo_report["assumptions"]:
        assert a in text
    markdown = render(demo_report, "markdown")
    closing = markdown.rstrip().splitlines()[-1]
    assert closing in text


def test_figures_show_the_results_numbers(page, demo_report):
    # the chain box of U4/2: its own worst case at 25 °C and its total over temperature,
    # as the JSON has them (4.01 mV and 253 mV, fixtures/golden/demo.md)
    assert "own 4.01 mV at 25 °C" in page and "total 253 mV at 70 °C" in page
    assert "×11" in page  # the gain from U4/1's output to U4/2's (golden: U4/1 ×11)
    u11 = next(s for s in demo_report["designs"][0]["stages"] if s["id"] == "U1/1")
    assert f"99.7 % within ±{u11['monte_carlo_v'] * 1e3:.3g} mV" in page
    assert "sampled at 70 °C (dot)" in page


def test_report_without_kept_charts_says_so(demo_report):
    plain = audit_paths([str(DEMO / "frontend.kicad_sch")], jobs=1,
                        overrides={"mc_samples": 0})
    text = render(plain, "html")
    assert "Curves not kept in this result" in text
    assert element_id("bar", 1, "U4/2") in text and element_id("curve", 1, "U4/2") not in text


def test_cli_writes_the_page(tmp_path):
    out = tmp_path / "report.html"
    result = CliRunner().invoke(main, ["audit", str(DEMO / "frontend.kicad_sch"), "--format",
                                       "html", "--no-cache", "--samples", "500", "--output",
                                       str(out)])
    assert result.exit_code == 1, result.output  # the demo has error findings
    text = out.read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>") and element_id("hist", 1, "U4/2") in text


def test_json_with_charts_merges_into_a_page(tmp_path):
    shard = tmp_path / "all.json"
    CliRunner().invoke(main, ["audit", str(DEMO / "frontend.kicad_sch"), "--charts",
                              "--no-cache", "--samples", "500", "--output", str(shard)])
    data = json.loads(shard.read_text(encoding="utf-8"))
    assert data["designs"][0]["settings"]["charts"] is True
    assert "over_temperature" in data["designs"][0]["stages"][0]
    out = tmp_path / "merged.html"
    result = CliRunner().invoke(main, ["merge", str(shard), "--format", "html", "-o", str(out)])
    assert result.exit_code == 1
    assert element_id("curve", 1, "U1/1") in out.read_text(encoding="utf-8")


@pytest.fixture
def client(tmp_path):
    from schemcheck_api import create_app

    app = create_app({"STORE_PATH": str(tmp_path / "store.sqlite3"),
                      "ALLOWED_FOLDERS": [str(FIXTURES)], "AUDIT_OVERRIDES": {"mc_samples": 300},
                      "AUDIT_TIMEOUT": 60})
    return app.test_client()


def test_service_route_and_openapi(client):
    from openapi_spec_validator import validate

    created = client.post("/v1/audits", json={"path": str(DEMO / "frontend.kicad_sch")})
    assert created.status_code == 201
    audit_id = created.get_json()["id"]
    stage = created.get_json()["result"]["designs"][0]["stages"][0]
    assert stage["histogram"]["samples"] == 300 and stage["over_temperature"]["temps_c"]
    response = client.get(f"/v1/audits/{audit_id}/report.html")
    assert response.status_code == 200 and response.mimetype == "text/html"
    body = response.get_data(as_text=True)
    assert element_id("curve", 1, "U4/2") in body and element_id("hist", 1, "U1/1") in body
    document = client.get("/openapi.json").get_json()
    validate(document)
    operation = document["paths"]["/v1/audits/{audit_id}/report.{suffix}"]["get"]
    suffix = next(p for p in operation["parameters"] if p["name"] == "suffix")
    assert "html" in suffix["schema"]["enum"]
    assert "text/html" in operation["responses"]["200"]["content"]
    stage_schema = document["components"]["schemas"]["Stage"]["properties"]
    assert {"driven_by", "over_temperature", "histogram"} <= set(stage_schema)


def _action():
    sys.path.insert(0, str(ROOT / "scripts"))
    try:
        import schemcheck_action
    finally:
        sys.path.pop(0)
    return schemcheck_action


def test_editor_action_open_writes_and_opens_the_report(tmp_path, monkeypatch):
    action = _action()
    folder = tmp_path / "board"
    folder.mkdir()
    for name in ("frontend.kicad_sch", "photodiode.kicad_sch", "bridge.kicad_sch",
                 "acpreamp.kicad_sch", "chain.kicad_sch", "schemcheck.toml", "parts.toml"):
        (folder / name).write_bytes((DEMO / name).read_bytes())
    opened: list[str] = []
    monkeypatch.setattr(action.webbrowser, "open", lambda url, *a, **k: opened.append(url))

    def no_service(*args, **kwargs):
        raise OSError("no service")

    monkeypatch.setattr(action, "via_service", no_service)  # the in-process fallback
    assert action.main([str(folder / "frontend.kicad_sch"), "--open"]) == 1
    report = folder / "frontend.dc-report.html"
    assert opened == [report.as_uri()]
    assert element_id("curve", 1, "U4/2") in report.read_text(encoding="utf-8")
    assert (folder / "frontend.dc-checklist.md").is_file()


def test_editor_action_open_from_the_service(client, tmp_path, monkeypatch):
    action = _action()

    def request(url, token, data=None, content_type=None, timeout=300.0):
        path = url.split("http://service", 1)[1]
        if data is not None:  # as the real request(): the client names itself
            response = client.post(path, data=data, content_type=content_type,
                                   headers={"X-Schemcheck-Client": "schemcheck-action"})
        else:
            response = client.get(path)
        return response.status_code, response.get_data()

    monkeypatch.setattr(action, "request", request)
    _, checklist, page = action.via_service(str(DEMO / "frontend.kicad_sch"),
                                                 "http://service", None, html=True)
    assert checklist.startswith("# DC error checklist")
    assert page is not None and element_id("hist", 1, "U4/2") in page


def test_loop_without_part_data_renders_its_arrows_and_says_what_is_missing():
    from schemcheck.audit import audit_netlist
    from schemcheck.report.json import to_data
    from schemcheck.results import Report
    from schemcheck.settings import Settings

    from .circuits import circuit

    # U1 sums IN and U2's output; U2 inverts U1's output: each feeds the other. No part has
    # Vos, Ib or Ios, so no worst case is known.
    design = audit_netlist(circuit("R1 IN s 10k", "R2 s o1 10k", "R3 o2 s 100k",
                                   "U1 p=GND m=s out=o1", "R4 o1 m2 10k", "R5 m2 o2 10k",
                                   "U2 p=GND m=m2 out=o2"), Settings(mc_samples=0, charts=True))
    assert {s.id: s.driven_by for s in design.stages} == {"U1/1": ["U2/1"], "U2/1": ["U1/1"]}
    report = to_data(Report(designs=[design]))
    text = render(report, "html")
    ids = set(_parsed(text).ids)
    assert {"arrow-1-U1-1-U2-1", "arrow-1-U2-1-U1-1", "box-1-U1-1", "box-1-U2-1"} <= ids
    assert "Dashed arrows close a loop" in text
    assert "No stage's worst case is known" in text
