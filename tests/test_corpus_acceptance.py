"""Real public designs nobody here drew (../shared/corpus): the DC network read right.

Outside source: a reviewer's hand analysis of each stage from the drawing (noise gain
1 + Rf/Ri with Ri the resistance from the summing node to its sources, worked out below
from the designs' own values), and which paths the drawing has. The parts library is
invented (figures of our own keyed to the designs' Value text), only so that the checks
that need parameters run. Skipped where the corpus is absent.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.circuit.load import load_netlist
from schemcheck.io.partslib import load_parts_library
from schemcheck.settings import Settings

from .conftest import CORPUS, corpus_files, corpus_ids, needs_corpus, stages_as_data

SCOPETREX = "schlae__scopetrex/Scopetrex.kicad_sch"
MAGNUM = "bristol-communal-modular__magnum-percussion-instrument/kicad/magnum-drum-synth.kicad_sch"
LIMITER = ("DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/5XL-REV0/"
           "bpu-current_limiter.kicad_sch")
HAAS = "drandyhaas__HaasoscopePro/adc board/Kicad/Input_amps_1.kicad_sch"
HAIR = "zoemaestra__hair-electrolysis-machine-usb-c/hair-electrolysis-machine.kicad_sch"
MIXER = "Alloyed__KitsBlips/kicad/mixer/mixer.kicad_sch"

#: Invented figures (not any maker's) for three input classes of our own.
CLASSES = """
[parts.FET]
input = "jfet"
vos = { max = "6mV" }
ib = { max = "200pA" }
ios = { max = "100pA" }
[parts.BIPOLAR]
input = "bipolar"
vos = { max = "5mV" }
ib = { max = "100nA" }
ios = { max = "20nA" }
[parts.CMOS]
input = "cmos"
vos = { max = "1.5mV" }
ib = { max = "10pA" }
ios = { max = "10pA" }
"""

#: Which class each op-amp of the corpus gets, by sheet file and reference. The part
#: numbers themselves are read from the designs when the tests run (they become the
#: classes' aliases), so no maker's part number is written in this repository.
CLASS_BY_REF = {
    "mixer.kicad_sch": {"U1": "FET", "U2": "FET"},
    "magnum-drum-synth.kicad_sch": {"U1": "FET", "U3": "FET", "U5": "FET"},
    "Input_amps_1.kicad_sch": {"FL1": "FET", "IC18": "CMOS"},
    "Scopetrex.kicad_sch": {"U303": "FET", "U304": "FET", "U306": "BIPOLAR"},
    "bpu-current_limiter.kicad_sch": {"U601": "BIPOLAR", "U603": "BIPOLAR"},
    "hair-electrolysis-machine.kicad_sch": {"U8": "BIPOLAR"},
}


@pytest.fixture(scope="module")
def library(tmp_path_factory) -> dict:
    aliases: dict[str, set[str]] = {}
    for path in corpus_files():
        classes = CLASS_BY_REF.get(Path(path).name, {})
        if not classes:
            continue
        for part in load_netlist(path).parts:
            if part.ref in classes and part.value:
                aliases.setdefault(classes[part.ref], set()).add(part.value)
    text = CLASSES
    for name, values in aliases.items():
        text = text.replace(f"[parts.{name}]\n", f"[parts.{name}]\naliases = "
                            f"{json.dumps(sorted(values))}\n")
    path = tmp_path_factory.mktemp("parts") / "parts.toml"
    path.write_text(text, encoding="utf-8")
    return load_parts_library(path)


def audit(path: str, library: dict | None = None, **settings):
    return stages_as_data(audit_netlist(load_netlist(CORPUS / path),
                                        Settings(mc_samples=0, **settings), library))


def stage(result, ref: str, unit: int, channel: int | None = None) -> dict:
    return next(s for s in result.stages
                if (s["ref"], s["unit"], s["channel"]) == (ref, unit, channel))


def findings(result, ref: str | None = None, unit: int | None = None):
    return sorted((f.rule, f.severity) for f in result.findings
                  if (ref is None or f.ref == ref) and (unit is None or f.unit == unit))


def reason(result, ref: str, unit: int) -> str:
    return next(item["reason"] for item in result.not_analysed
                if (item["ref"], item["unit"]) == (ref, unit))


@needs_corpus
def test_scopetrex_display_input_driven_by_a_port_pin(library):
    result = audit(SCOPETREX, library)
    # U306 unit 3: its display input net is driven by the VIA's CB2 port pin (bidirectional) through
    # R315 2.2K: 1 + R353 / (R351 + R315) = 1 + 4.7k / (4.7k + 2.2k) = 1.681.
    u306 = stage(result, "U306", 3)
    assert u306["noise_gain"] == pytest.approx(1 + 4.7e3 / 6.9e3, rel=0.015)
    driven = next(a for a in result.assumptions if a.startswith("nets driven by other parts"))
    assert "/~{BLANK} from U207 pin 19 (bidirectional)" in driven
    # + sees R349 || R350 = 2.35k, - sees 6.9k || 4.7k = 2.80k: within the 20 % band.
    assert findings(result, "U306", 3) == []
    # U304 unit 1 unchanged: 1.523 (its feedback through the R302 pot at mid-travel).
    assert stage(result, "U304", 1)["noise_gain"] == pytest.approx(1.523, rel=0.015)


@needs_corpus
def test_scopetrex_sample_and_hold_through_a_multiplexer_is_not_an_error():
    result = audit(SCOPETREX)
    assert not [f for f in result.findings if f.rule in ("no-bias-path", "no-dc-feedback")]
    for unit in (1, 2, 3, 4):
        assert "U302 (analog switch or multiplexer)" in reason(result, "U303", unit)
    # U306 units 2 and 4 follow the held outputs: R318 4.7K in, R347 4.7K back,
    # 1 + 4.7k/4.7k = 2, their totals leaving out the hold buffers they are fed from.
    for unit, source in ((2, "U303/1"), (4, "U303/4")):
        follower = stage(result, "U306", unit)
        assert follower["noise_gain"] == pytest.approx(2.0, rel=1e-9)
        assert follower["excludes"] == [source]


@needs_corpus
def test_magnum_mixer_pots_read_with_their_taper():
    result = audit(MAGNUM)
    # U1 unit 4: three 100kA volume pots (mid-travel: 25k to 0 V through each wiper) and
    # 100k resistors into the 100k feedback: 1 + 100k / ((100k + 25k) / 3) = 3.4; at
    # either end of every pot each input sees 100k: 1 + 100k / (100k / 3) = 4.
    u1 = stage(result, "U1", 4)
    assert u1["noise_gain"] == pytest.approx(3.4, rel=0.015)
    assert u1["noise_gain_range"] == pytest.approx([3.4, 4.0], rel=0.015)


@needs_corpus
def test_magnum_ambiguous_trimmer_is_not_an_error_and_settings_read_it(library):
    result = audit(MAGNUM, library)
    assert findings(result, "U3", 2) == [("unreadable-value", "warning")]
    assert reason(result, "U3", 2) == ("RV2 Value '1m' could not be read (ambiguous, "
                                       "milli-ohm or mega-ohm)")
    given = audit(MAGNUM, library, values={"RV2": "1M"})
    # RV2 1M as the feedback (wiper to one end: 500k at mid-travel); R24 into the - input
    # is AC-coupled by C39, open at DC: a DC follower, the - input seeing 500k.
    u3 = stage(given, "U3", 2)
    assert u3["noise_gain"] == pytest.approx(1.0, rel=1e-9)
    assert u3["resistance_minus_ohm"] == pytest.approx(500e3, rel=1e-9)
    assert [f for f in findings(given, "U3", 2) if f[1] != "info"] == []


@needs_corpus
def test_magnum_ota_output_and_header_on_the_summing_node():
    result = audit(MAGNUM)
    assert findings(result, "U5", 2) == [("dc-path-unknown", "warning")]
    assert "J5 (connector)" in reason(result, "U5", 2)
    assert not [f for f in result.findings if f.severity == "error"]


@needs_corpus
def test_io_buffers_fed_through_series_resistors_from_the_io_pins():
    # The IO pins BPIO0..7 come from another sheet (global labels); each reaches a
    # follower's + input through 100K (RN317...): analysed, noise gain 1. Pull-ups
    # switched by transistors and a 16-channel multiplexer elsewhere do not make the
    # pins part of the followers' loops.
    result = audit("DangerousPrototypes__BusPirate5-hardware/bus_pirate_pcb/5XL-REV0/"
                   "IO-expand-595-mux.kicad_sch")
    for ref in ("U504", "U505"):
        for unit in (1, 2, 3, 4):
            follower = stage(result, ref, unit)
            assert follower["noise_gain"] == pytest.approx(1.0, rel=1e-9)
            assert follower["resistance_plus_ohm"] == pytest.approx(100e3, rel=1e-9)
    assert "U402 (analog switch or multiplexer)" in reason(result, "U404", 1)


@needs_corpus
def test_current_limiter_comparator_symbols_carrying_op_amps(library):
    result = audit(LIMITER, library)
    # U601: R603 1K in, R605 33K back: 1 + 33k/1k = 34; U603: output on its - input.
    assert stage(result, "U601", 1)["noise_gain"] == pytest.approx(34.0, rel=1e-9)
    assert stage(result, "U603", 1)["noise_gain"] == pytest.approx(1.0, rel=1e-9)
    assert ("comparator-symbol", "warning") in findings(result, "U601")
    assert ("comparator-symbol", "warning") in findings(result, "U603")
    assert reason(result, "U602", 1) == "comparator"


@needs_corpus
def test_haasoscope_imported_resistors_and_dac_pins(library):
    result = audit(HAAS, library)
    assert not [f for f in result.findings if f.rule == "no-bias-path"]
    # IC18 amplifier 1: R146 1k back, R143 1k to the DAC output, R147 1k to amplifier 2's
    # output: 1 + 1k / (1k || 1k) = 3. Amplifier 2: R145 1k back, R144 + R172 = 2k to
    # the DAC reference: 1 + 1k / 2k = 1.5.
    assert stage(result, "IC18", 1, 1)["noise_gain"] == pytest.approx(3.0, rel=1e-9)
    assert stage(result, "IC18", 1, 2)["noise_gain"] == pytest.approx(1.5, rel=1e-9)
    fl1 = stage(result, "FL1", 1)
    assert fl1["noise_gain"] == pytest.approx(1.0, rel=1e-9)
    assert fl1["topology"] == "buffer"  # FB (internally the output) tied to IN-


@needs_corpus
def test_hair_machine_feedback_through_a_transistor(library):
    result = audit(HAIR, library)
    assert findings(result, "U8", 1) == [("dc-path-unknown", "warning")]
    assert "Q2 (transistor)" in reason(result, "U8", 1)
    # U8 unit 2 is the spare of the dual, tied off as a follower (output on its - input and
    # nothing else, + input at half the battery through R34/R35): not a stage, no finding.
    assert not any(s["ref"] == "U8" and s["unit"] == 2 for s in result.stages)
    assert findings(result, "U8", 2) == []
    assert reason(result, "U8", 2) == "unused amplifier (spare, tied off as a follower)"


@needs_corpus
def test_mixer_unchanged(library):
    result = audit(MIXER, library)
    gains = [(s["ref"], s["unit"], round(s["noise_gain"], 3)) for s in result.stages]
    assert gains == [("U1", 1, 5.826), ("U1", 2, 3.083), ("U1", 3, 5.826), ("U1", 4, 3.083),
                     ("U2", 1, 5.604), ("U2", 2, 4.03)]
    assert result.findings == []
    # The master pot RV1 in U1 unit 2's feedback: 1 + (0 .. 10k) / 4.7k... at its ends
    # the noise gain runs from 1 to 5.17 around 3.08 at mid-travel.
    assert stage(result, "U1", 2)["noise_gain_range"] == pytest.approx([1.0, 5.167],
                                                                       rel=0.002)


ROOTS = [p for p in corpus_files(".kicad_sch") if p.name in {
    Path(x).name for x in (SCOPETREX, MAGNUM, LIMITER, HAAS, HAIR, MIXER)}]


@needs_corpus
@pytest.mark.parametrize("path", ROOTS, ids=corpus_ids(ROOTS))
def test_no_missing_path_error_where_the_drawing_has_the_path(path, library):
    result = stages_as_data(audit_netlist(load_netlist(path), Settings(mc_samples=0), library))
    assert [f.message for f in result.findings
            if f.rule in ("no-bias-path", "no-dc-feedback")] == []
    for item in result.not_analysed:
        assert item["reason"]


#: Invented figures for every op-amp of the corpus: a bipolar part with a large bias
#: current, so that every stage gets advice to weigh (not any maker's figures).
BIG_IB_LIBRARY = """
[parts.BIGIB]
aliases = ["TL074", "TL072", "LF347", "LF353", "OPA859IDSGR", "LM6134", "LM358B",
           "GS324MT/TR", "GS321A-TR", "LMV321", "TLV9102IPWR", "OPA357AIDBVR"]
input = "bipolar"
vos = { max = "1mV" }
ib = { max = "800nA" }
ios = { max = "50nA" }
"""


@pytest.fixture(scope="module")
def big_ib(tmp_path_factory) -> dict:
    path = tmp_path_factory.mktemp("parts") / "parts.toml"
    path.write_text(BIG_IB_LIBRARY, encoding="utf-8")
    return load_parts_library(path)


@needs_corpus
@pytest.mark.parametrize("path", ROOTS, ids=corpus_ids(ROOTS))
def test_advice_on_real_designs_lowers_the_error(path, big_ib):
    # Every suggestion is solved again by the tool: its worst case after is below the
    # stage's as drawn, and a resistor is replaced by a wire only where no signal comes
    # in through a capacitor or another part (never an input's bias return).
    result = audit_netlist(load_netlist(path), Settings(mc_samples=0, default_budget=20e-3),
                           big_ib)
    for finding in result.findings:
        if finding.rule.startswith("bias-resistor"):
            assert finding.data["worst_case_after_v"] < finding.data["worst_case_v"]
            assert "the signal comes through" not in finding.message or \
                finding.data["action"] != "replace-with-wire"


@needs_corpus
def test_magnum_ac_coupled_follower_keeps_its_bias_return(big_ib):
    # U3 unit 1: a follower whose + input is AC-coupled through C18 with R26 (220 kΩ) its
    # bias return. With the invented 800 nA part: Ib x R = 176 mV. Never "R26 -> 0 Ω";
    # the verified fixes are 221 kΩ in the feedback path, or R26 lowered to the largest
    # E24 value meeting 20 mV: 1 mV + R x (800 nA + 25 nA) <= 20 mV -> 22 kΩ.
    result = audit(MAGNUM, big_ib, default_budget=20e-3)
    [finding] = [f for f in result.findings if f.rule == "bias-resistor-mismatch"
                 and f.stage == "U3/1"]
    assert "0 Ω" not in finding.suggestion and "wire" not in finding.suggestion
    assert finding.data["bias_error_v"] == pytest.approx(800e-9 * 220e3, rel=1e-9)
    assert finding.data["action"] == "add-series-minus"
    assert finding.data["alternative_ohm"] == 22e3
    assert "bias return" in finding.message


@needs_corpus
def test_scopetrex_sample_and_holds(library):
    # The X/Y/Z sample-and-holds: LF347 followers held by 4.7 nF capacitors behind the
    # multiplexer U302. With the invented FET figures (Ib 200 pA): 200 pA / 4.7 nF =
    # 42.6 mV/s at 25 °C (capacitor law i = C dV/dt).
    result = audit(SCOPETREX, library)
    droops = {f.stage: f for f in result.findings if f.rule == "hold-droop"}
    assert sorted(droops) == ["U303/1", "U303/2", "U303/3", "U303/4"]
    for finding in droops.values():
        assert finding.severity == "warning"
        assert finding.data["capacitance_f"] == pytest.approx(4.7e-9, rel=1e-12)
        assert finding.data["droop_v_per_s"] == pytest.approx(200e-12 / 4.7e-9, rel=1e-9)
    assert [f.rule for f in result.findings if f.rule in ("no-bias-path", "no-dc-feedback")] \
        == []
