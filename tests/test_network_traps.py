"""The traps real designs hold, on small invented schematics (fixtures/network/).

Outside sources, per test: the noise gain of an inverting or non-inverting stage,
1 + Rf/Ri with Ri the parallel of every resistor from the summing node to a source
(Franco, "Design with Operational Amplifiers and Analog Integrated Circuits", ch. 1 and
on DC errors; from memory); the editor's own meaning of its symbols (KiCad's libraries:
a test point, a label and PWR_FLAG name or mark a net and drive nothing; a header is
open until a jumper is fitted; a bidirectional pin of a port drives its net); IEC 60062
for the RKM value code and the SI prefixes (BIPM SI Brochure, 9th ed.) for values.
"""

from __future__ import annotations

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.circuit.load import load_netlist
from schemcheck.report.audit_text import stage_details
from schemcheck.settings import Settings

from .conftest import FIXTURES, stages_as_data

NETWORK = FIXTURES / "network"


def audit(name: str, **settings):
    return stages_as_data(audit_netlist(load_netlist(NETWORK / f"{name}.kicad_sch"),
                                        Settings(mc_samples=0, **settings)))


def stage(result, ref: str) -> dict:
    return next(s for s in result.stages if s["ref"] == ref)


def rules(result) -> list[tuple[str, str, str]]:
    """Warnings and errors (suggestions at info level are another rule's business)."""
    return sorted((f.rule, f.severity, f.ref) for f in result.findings if f.severity != "info")


def not_analysed(result) -> dict[str, str]:
    return {item["ref"]: item["reason"] for item in result.not_analysed}


def test_test_point_on_summing_node_drives_nothing():
    # Noise gain 1 + 100k / (10k || 10k) = 21 (inverting summer; handbook form).
    result = audit("testpoint_summing")
    assert stage(result, "U1")["status"] == "ok"
    assert stage(result, "U1")["noise_gain"] == pytest.approx(21.0, rel=1e-9)
    assert rules(result) == []


def test_global_label_on_summing_node_drives_nothing():
    # Transimpedance stage: noise gain 1 and Ib- x Rf at the output (V/A = Rf = 1 MΩ).
    result = audit("label_summing")
    u1 = stage(result, "U1")
    assert u1["status"] == "ok"
    assert u1["noise_gain"] == pytest.approx(1.0, rel=1e-9)
    assert u1["resistance_minus_ohm"] == pytest.approx(1e6, rel=1e-9)
    assert rules(result) == []


def test_selector_header_in_feedback_is_not_an_error():
    # The feedback resistor is chosen by a jumper on J1: open as drawn, so the stage is
    # not analysed (a warning naming J1), never a missing-feedback error.
    result = audit("header_feedback")
    assert rules(result) == [("dc-path-unknown", "warning", "U1")]
    assert "J1 (connector)" in result.findings[0].message
    assert "J1 (connector)" in not_analysed(result)["U1"]
    assert result.stages == []


def test_values_in_every_notation():
    result = audit("values")
    # '10 kΩ' (a space before the prefix) and '100k': 1 + 100k/10k = 11.
    assert stage(result, "U1")["noise_gain"] == pytest.approx(11.0, rel=1e-9)
    # SPICE 'Meg': 1 + 10M/1M = 11.
    assert stage(result, "U2")["noise_gain"] == pytest.approx(11.0, rel=1e-9)
    # '100kA' (audio taper) as a variable resistor: 1 + 50k/10k = 6 at mid-travel, and
    # 1 + (0 .. 100k)/10k = 1 .. 11 over the travel (the budget at the worse end, 11).
    u3 = stage(result, "U3")
    assert u3["noise_gain"] == pytest.approx(6.0, rel=1e-9)
    assert u3["noise_gain_range"] == pytest.approx([1.0, 11.0], rel=1e-4)
    # Worst case at the worse end (RV1 fully in, Rf = 100k, + input on ground):
    # |NG|·Vos + |s_ib+ + s_ib-|·Ib + |s_ib+ - s_ib-|/2·Ios with s_ib+ = 0, s_ib- = Rf
    # (the handbook error terms summed at their worst signs).
    assert u3["budget_at"] == "RV1 wiper at 100%"
    assert u3["worst_case_own_v"] == pytest.approx(1e-3 * 11 + 10e-9 * 100e3 + 0.5e-9 * 100e3,
                                                   rel=1e-4)
    assert "U4" not in {s["ref"] for s in result.stages}
    assert "U5" not in {s["ref"] for s in result.stages}
    assert rules(result) == [("unreadable-value", "warning", "U4"),
                             ("unreadable-value", "warning", "U5")]
    messages = {f.ref: f.message for f in result.findings}
    assert "R7, whose Value 't2k' could not be read" in messages["U4"]
    assert "R9, whose Value '1m' could not be read (ambiguous" in messages["U5"]
    assert not_analysed(result)["U4"] == ("R7 Value 't2k' could not be read (not a resistance "
                                          "in any notation the tool reads)")


def test_values_given_by_settings():
    # A house notation for the project ('t2k' is a 2 kΩ trimmer) and a value by reference.
    result = audit("values", value_notations=((r"^t(.+)$", r"\1"),), values={"R9": "1M"})
    assert stage(result, "U4")["noise_gain"] == pytest.approx(1 + 20e3 / 2e3, rel=1e-9)
    u5 = stage(result, "U5")
    assert u5["noise_gain"] == pytest.approx(1.0, rel=1e-9)
    assert u5["resistance_plus_ohm"] == pytest.approx(1e6, rel=1e-9)  # R9 read as 1 MΩ
    assert [f for f in result.findings if f.rule == "unreadable-value"] == []


def test_resistor_symbol_from_another_tool():
    # MF_RESISTOR_0402 with reference R1/R2: resistors; 1 + 100k/10k = 11.
    result = audit("imported_resistor")
    assert stage(result, "U1")["noise_gain"] == pytest.approx(11.0, rel=1e-9)
    assert rules(result) == []


def test_bidirectional_port_pin_drives_its_net():
    # The port pin is a source: the 10k input resistor counts, 1 + 22k/10k = 3.2.
    result = audit("bidirectional_driver")
    assert stage(result, "U1")["noise_gain"] == pytest.approx(3.2, rel=1e-9)
    assert any("from U2 pin 1 (bidirectional)" in a for a in result.assumptions)


def test_comparator_symbol_wired_as_follower_is_analysed_with_a_warning():
    result = audit("comparator_follower")
    u1 = stage(result, "U1")
    assert u1["noise_gain"] == pytest.approx(1.0, rel=1e-9)
    assert u1["resistance_plus_ohm"] == pytest.approx(0.0, abs=1e-9)  # J1 drives the input
    assert rules(result) == [("comparator-symbol", "warning", "U1")]
    assert "U1" not in not_analysed(result)


def test_analog_switch_in_bias_path_is_not_an_error():
    # A sample-and-hold: the hold capacitor C1 (1 nF) behind the analog switch U2. While
    # the switch is open the bias current discharges C1: dV/dt = Ib / C (capacitor law
    # i = C dV/dt) = 10 nA / 1 nF = 10 V/s, 10 mV over the default 1 ms hold; bipolar
    # currents are flat over temperature, so the same at 70 °C.
    result = audit("switch_bias")
    assert rules(result) == [("hold-droop", "warning", "U1")]
    finding = result.findings[0]
    assert "U2 (analog switch or multiplexer)" in finding.message
    assert "droop rate Ib/C = 10 nA / 1 nF = 10 V/s (10 mV over a 1 ms hold) at 25 °C" in \
        finding.message
    assert finding.data["droop_v_per_s"] == pytest.approx(10e-9 / 1e-9, rel=1e-12)
    assert finding.data["droop_v"] == pytest.approx(10.0 * 1e-3, rel=1e-12)
    assert "do not add a resistor" in finding.suggestion
    assert "U1" in not_analysed(result)


def test_hold_droop_over_a_stated_hold_time():
    # The hold time from the settings: 10 V/s over 50 us = 0.5 mV.
    result = audit("switch_bias", hold_time=50e-6)
    assert result.findings[0].data["droop_v"] == pytest.approx(10.0 * 50e-6, rel=1e-12)
    assert "(500 µV over a 50 µs hold)" in result.findings[0].message


def test_transistor_in_feedback_loop_is_not_an_error():
    result = audit("transistor_feedback")
    assert rules(result) == [("dc-path-unknown", "warning", "U1")]
    assert "DC feedback" in result.findings[0].message
    assert "Q1 (transistor)" in result.findings[0].message


def test_instrumentation_amplifier_ahead_of_follower_is_excluded_from_its_total():
    result = audit("inamp_follower")
    u2 = stage(result, "U2")
    assert u2["excludes"] == ["U1"]
    assert not_analysed(result)["U1"] == "instrumentation amplifier"
    assert "excludes" in dict(stage_details(u2, None))  # said with the stage in every output
