"""Text, Markdown checklist and SARIF outputs of the demo and of a corpus design.

Outside sources: the SARIF 2.1.0 JSON schema (OASIS; a copy ships in
fixtures/sarif/, and ../shared/schemas/ is used too where present), validated with
the jsonschema package; the golden files in fixtures/golden/ were produced by the
commands below and checked by hand, line by line, against the numbers of the same run's
JSON (``--format json``) and against handbook closed forms worked out from the drawn
values (how, per stage, in GOLDEN_CHECKS; the same closed forms are asserted on the JSON
in test_split.py). test_golden_numbers_are_the_json_numbers re-checks that every split
and requirement figure printed in the text golden is the JSON figure, scaled.
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


#: How each stage line of the goldens was checked by hand (demo: fixtures/demo, parts.toml;
#: handbook: output error = NG·Vos + Rf·Ib- - NG·Rp·Ib+, Ib = (Ib+ + Ib-)/2, Ios = Ib+ - Ib-):
GOLDEN_CHECKS = """
U1/1 TIA Rf 10 MΩ, + on GND, LX-J1 2 mV / 50 pA / 25 pA / 10 µV/°C, JFET: Vos 2 mV, Ib 10 MΩ
  x 50 pA = 500 µV, Ios 5 MΩ x 25 pA = 125 µV; at 70 °C Vos 2.45 mV, currents x 2^4.5 ->
  2.45 + 11.31 + 2.83 = 16.6 mV, drift 14 mV; needs (5 mV): alone 5 mV, 500 pA, 1 nA; /3 ->
  1.67 mV, 167 pA, 333 pA; part at worst 2.45 mV, 1.13 nA, 566 pA -> too much.
U2/1 difference NG 10.66, R+ = R- = 9.38 kΩ (JSON), LX-P7: Vos 10.66 x 60 µV = 640 µV, Ib term
  0 (equal resistances, left out), Ios 100 kΩ x 3 nA = 300 µV, drift 45 x 0.6 µV x 10.66 = 288 µV.
U4/1 inverting Ri 10k Rf 100k Rp 22k, LX-B27: NG 11, R- = Ri||Rf = 9.09 kΩ; Vos 2.75 mV, Ib
  |100k - 11 x 22k| x 120 nA = 17.0 mV (Ib+ alone -29 mV, Ib- alone 12 mV), Ios 171k x 12 nA
  = 2.05 mV, drift 11 x 45 x 1.5 µV = 742 µV; compensation R403 -> Ri||Rf = 9.09 kΩ;
  solved again with 9.09 kΩ, at 70 °C: 11 x 317.5 µV = 3.49 mV + |100k - 99.99k| x 120 nA
  = 1.2 µV + 99.995k x 12 nA = 1.2 mV -> 4.69 mV (from 22.6 mV).
U4/2 non-inverting NG 11 (Rf 10k, Rg 1k, R- 909 Ω): Vos 2.75 mV, Ib 10k x 120 nA = 1.2 mV, Ios
  5k x 12 nA = 60 µV, U4/1 x 11: 11 x 21.84 = 240 mV, drift 12 x 742 µV = 8.91 mV, total 253 mV;
  upstream at 70 °C 11 x 22.58 = 248 mV > 20 mV budget -> no part meets it.
mixer (--budget 10mV, no part data): U1/2 inverting Rf 5k, NG 3.083: coefficients 3.08·Vos +
  5 mV/µA·Ib-, R- = Rf/NG = 1.62 kΩ; needs alone 10 mV/3.083 = 3.24 mV, 10 mV/5k = 2 µA,
  10 mV/2.5k = 4 µA, /3 -> 1.08 mV, 667 nA, 1.33 µA; U1/1 inverting summer (two source
  resistors at the - input, + on ground) Rf 100k, NG 5.826: alone
  1.72 mV, 100 nA, 200 nA. Its assumptions: 3 lines (rails; 8 external nets; 17 pots).
"""


def test_text_golden(monkeypatch):
    assert render("text", monkeypatch) == (FIXTURES / "golden" / "demo.txt").read_text(
        encoding="utf-8")


def render_corpus(fmt, monkeypatch, corpus):
    monkeypatch.chdir(corpus)  # the design's path as the reader sees it: relative to here
    result = CliRunner().invoke(main, ["audit", MIXER, "--format", fmt, "--no-cache",
                                       "--samples", "0", "--budget", "10mV"])
    assert result.exit_code == 0  # warnings only: no part data
    return result.stdout


MIXER = "Alloyed__KitsBlips/kicad/mixer/mixer.kicad_sch"


@pytest.mark.parametrize("fmt,suffix", [("text", "txt"), ("markdown", "md")])
def test_corpus_design_golden(fmt, suffix, monkeypatch, corpus):
    assert render_corpus(fmt, monkeypatch, corpus) == (
        FIXTURES / "golden" / f"mixer.{suffix}").read_text(encoding="utf-8")


def test_golden_numbers_are_the_json_numbers(monkeypatch):
    from schemcheck.units import format_si

    data = json.loads(render("json", monkeypatch))["designs"][0]
    text = (FIXTURES / "golden" / "demo.txt").read_text(encoding="utf-8")
    for stage in data["stages"]:
        split = stage["split"]
        if not split or split["vos_v"] is None:
            continue
        expected = [f"{label} {format_si(split[key], 'V')}" for label, key in
                    (("Vos", "vos_v"), ("Ib", "ib_v"), ("Ios", "ios_v")) if split[key]]
        expected += [f"{u['id']} ×{u['gain']:.4g}: {format_si(u['worst_case_v'], 'V')}"
                     for u in stage["upstream"]]
        expected.append(f"drift to {split['worst_temp_c']:g} °C {format_si(split['drift_v'], 'V')}")
        lines = text.splitlines()
        row = next(i for i, ln in enumerate(lines) if ln.startswith(f"  {stage['id']} "))
        line = lines[row + 1]
        assert line.strip().startswith("split: ")
        for piece in expected:
            assert piece in line, (stage["id"], piece)
        assert line.endswith(f"= {format_si(stage['worst_case_over_temp_v'], 'V')}")
        need = stage["requirements"]
        if need and need["available_v"] > 0:
            needs = next(ln for ln in lines[row:] if ln.strip().startswith("needs: "))
            for key, unit in (("vos_split_v", "V"), ("ib_split_a", "A"), ("ios_split_a", "A"),
                              ("vos_alone_v", "V"), ("ib_alone_a", "A"), ("ios_alone_a", "A")):
                assert f"< {format_si(need[key], unit)}" in needs


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
    assert "- [ ] **U4/2** (LX-B27, /Chain/): non-inverting to `CHAIN_OUT`, noise gain 11" in text
    assert "do not replace review by a qualified engineer" in text


def test_output_file(tmp_path, monkeypatch):
    out = tmp_path / "checklist.md"
    render("markdown", monkeypatch, "--output", str(out))
    assert out.read_text(encoding="utf-8").startswith("# DC error checklist")
