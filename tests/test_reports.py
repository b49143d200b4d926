"""Markdown checklist and SARIF outputs of the demo.

Outside sources: the SARIF 2.1.0 JSON schema (OASIS; a copy ships in
fixtures/sarif/, and ../shared/schemas/ is used too where present), validated with
the jsonschema package; the golden files in fixtures/golden/ were produced by this
command and checked by hand against the demo's known defects (fixtures/README.md).
"""

from __future__ import annotations

import json

import jsonschema
import pytest
from click.testing import CliRunner

from schemcheck.cli import main

from .conftest import FIXTURES, ROOT

SCHEMAS = [FIXTURES / "sarif" / "sarif-schema-2.1.0.json",
           ROOT.parent / "shared" / "schemas" / "sarif-schema-2.1.0.json"]


def render(fmt, monkeypatch, *extra):
    monkeypatch.chdir(ROOT)
    result = CliRunner().invoke(main, ["audit", "fixtures/demo/frontend.kicad_sch", "--format",
                                       fmt, "--no-cache", "--samples", "0", *extra])
    assert result.exit_code == 1  # the demo has error findings
    return result.stdout


def test_markdown_golden(monkeypatch):
    assert render("markdown", monkeypatch) == (FIXTURES / "golden" / "demo.md").read_text(
        encoding="utf-8")


def test_sarif_golden(monkeypatch):
    assert json.loads(render("sarif", monkeypatch)) == json.loads(
        (FIXTURES / "golden" / "demo.sarif").read_text(encoding="utf-8"))


@pytest.mark.parametrize("schema", [p for p in SCHEMAS if p.is_file()], ids=lambda p: p.parent.name)
def test_sarif_validates_against_schema(schema, monkeypatch):
    log = json.loads(render("sarif", monkeypatch))
    validator = jsonschema.Draft7Validator(json.loads(schema.read_text(encoding="utf-8")))
    errors = sorted(validator.iter_errors(log), key=str)
    assert errors == []
    levels = sorted(r["level"] for r in log["runs"][0]["results"])
    assert levels == ["error", "error", "error", "warning"]
    uris = {r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"]
            for r in log["runs"][0]["results"]}
    assert uris == {"fixtures/demo/acpreamp.kicad_sch", "fixtures/demo/chain.kicad_sch",
                    "fixtures/demo/photodiode.kicad_sch"}


def test_markdown_has_checkboxes_and_caution(monkeypatch):
    text = render("markdown", monkeypatch)
    assert "- [ ] U4 unit 2 (LX-B27, /Chain/): non-inverting, noise gain 11" in text
    assert "do not replace review by a qualified engineer" in text


def test_output_file(tmp_path, monkeypatch):
    out = tmp_path / "checklist.md"
    render("markdown", monkeypatch, "--output", str(out))
    assert out.read_text(encoding="utf-8").startswith("# DC error checklist")
