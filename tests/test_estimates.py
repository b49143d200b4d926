"""Class estimates: off by default, opt-in, marked in every output, never without an
input type.

Outside sources: the class values themselves are common practice orders of magnitude
with no source (README, "Class estimates"); what is checked against outside formulas is
what the audit does with them: the handbook inverting-stage error
Vos(1 + Rf/Ri) + (Ib + Ios/2)·Rf (Franco, "Design with Operational Amplifiers and Analog
Integrated Circuits", DC errors; from memory), the linear drift Vos + TCVos·|T - 25| and
the FET rule of thumb, bias current x2 every 10 °C (W. Jung, "Op Amp Applications
Handbook", section 1.4; from memory).
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from schemcheck.cli import main
from schemcheck.engine.estimates import CLASS_VALUES, input_type_from_text
from schemcheck.errors import ParseError
from schemcheck.io.settings_file import apply_settings
from schemcheck.run.batch import audit_paths
from schemcheck.run.runner import options_to_overrides
from schemcheck.settings import Settings

from .conftest import FIXTURES, ROOT

MATCHING = FIXTURES / "parts" / "matching.kicad_sch"


def design(**options):
    report = audit_paths([str(MATCHING)], overrides=options_to_overrides(samples=0, **options),
                         jobs=1)
    return report["designs"][0]


def stage(result, ref):
    return next(s for s in result["stages"] if s["ref"] == ref)


def test_off_by_default():
    result = design()
    assert stage(result, "U7")["params"]["estimate"] is None
    assert stage(result, "U7")["worst_case_own_v"] is None
    assert not any(f["rule"] == "estimated-parameters" for f in result["findings"])


def test_estimate_fills_and_marks_the_jfet_part():
    result = design(estimate_missing=True)
    u7 = stage(result, "U7")
    params = u7["params"]
    assert params["estimate"] == {"class": "jfet", "figures": ["vos", "ib", "ios", "tcvos"]}
    assert {params["source"][n] for n in ("vos", "ib", "ios", "tcvos")} == {
        "estimate (class jfet)"}
    assert params["source"]["input_type"] == "symbol description"
    jfet = CLASS_VALUES["jfet"]
    # inverting x10 (Ri 10k, Rf 100k, + grounded): Franco's error at 25 °C
    assert u7["worst_case_own_v"] == pytest.approx(
        jfet["vos"] * 11 + (jfet["ib"] + jfet["ios"] / 2) * 100e3, rel=1e-9)
    # at 70 °C: linear drift, currents x 2^4.5 (FET rule of thumb)
    hot = 2 ** ((70 - 25) / 10)
    assert u7["worst_case_over_temp_v"] == pytest.approx(
        (jfet["vos"] + 45 * jfet["tcvos"]) * 11 + (jfet["ib"] + jfet["ios"] / 2) * hot * 100e3,
        rel=1e-9)
    warnings = [f for f in result["findings"] if f["rule"] == "estimated-parameters"]
    assert [(f["ref"], f["severity"]) for f in warnings] == [("U7", "warning")]
    assert warnings[0]["message"] == (
        "U7/1 (OPX-77): Vos, Ib, Ios, TCVos marked estimate (class jfet), the common "
        "practice order of magnitude for a JFET-input op-amp, not datasheet figures; its "
        "budget is an order of magnitude only")
    assert any(line.startswith("estimate (class jfet): missing figures of U7 filled from class "
                               "values") for line in result["assumptions"])


def test_no_estimate_without_an_input_type():
    result = design(estimate_missing=True)
    assert stage(result, "U8")["params"]["estimate"] is None
    missing = next(f for f in result["findings"]
                   if f["rule"] == "missing-parameters" and f["ref"] == "U8")
    assert missing["message"] == (
        "OPX-88 (1 unit: U8/1) has no Vos, Ib, Ios: the stages' sensitivities and part "
        "requirements are reported, their error is unknown (no class estimate: its input type "
        "is unknown; give it an Input field or an "
        "input in the library)")


def test_library_figures_are_never_replaced():
    result = design(estimate_missing=True)
    for ref in ("U1", "U2", "U3", "U4", "U6"):
        assert stage(result, ref)["params"]["estimate"] is None


@pytest.mark.parametrize(("fmt", "expected"), [
    pytest.param("text", "      part data: estimate (class jfet): Vos, Ib, Ios, TCVos\n",
                 id="text"),
    pytest.param("markdown", "  - part data: estimate (class jfet): Vos, Ib, Ios, TCVos\n",
                 id="markdown"),
    pytest.param("sarif", "Vos, Ib, Ios, TCVos marked estimate (class jfet)", id="sarif"),
    pytest.param("json", '"vos": "estimate (class jfet)"', id="json"),
])
def test_every_output_marks_the_estimate(monkeypatch, fmt, expected):
    monkeypatch.chdir(ROOT)
    result = CliRunner().invoke(main, ["audit", str(MATCHING), "--format", fmt, "--no-cache",
                                       "--samples", "0", "--estimate-missing"])
    assert result.exit_code == 0
    text = result.stdout
    if fmt == "json":
        text = json.dumps(json.loads(text))
    assert expected in text


def test_setting_turns_it_on_and_is_validated():
    settings = apply_settings({"estimate_missing": True}, "schemcheck.toml", Settings())
    assert settings.estimate_missing and settings.describe()["estimate_missing"] is True
    with pytest.raises(ParseError) as caught:
        apply_settings({"estimate_missing": "yes"}, "schemcheck.toml", Settings())
    assert str(caught.value) == ("schemcheck.toml: key 'estimate_missing': expected true or "
                                 "false, found 'yes'")


@pytest.mark.parametrize(("text", "kind"), [
    pytest.param("Dual JFET-input operational amplifier", "jfet", id="jfet"),
    pytest.param("Low-power CMOS op-amp, rail-to-rail", "cmos", id="cmos"),
    pytest.param("Zero-drift CMOS operational amplifier", "chopper", id="zero-drift"),
    pytest.param("chopper stabilised amplifier", "chopper", id="chopper"),
    pytest.param("auto-zero amplifier", "chopper", id="auto-zero"),
    pytest.param("Precision bipolar op-amp", "bipolar", id="bipolar"),
    pytest.param("op-amp for a bipolar supply", None, id="bipolar-supply-is-not-an-input"),
    pytest.param("JFET input, bipolar output stage", "jfet", id="bipolar-output-ignored"),
    pytest.param("JFET and CMOS versions", None, id="two-types-unknown"),
    pytest.param("BiCMOS op-amp", None, id="bicmos-unknown"),
    pytest.param("Operational amplifier, generic", None, id="none"),
])
def test_input_type_from_words(text, kind):
    assert input_type_from_text(text) == kind
