"""The defects reviewers look for, and severities that say how sure the tool is.

Outside sources, per test: a push-pull output is a voltage source, so two on one net
leave it undefined (circuit theory: two ideal voltage sources in parallel have no
solution); the capacitor law i = C dV/dt for a hold capacitor's droop; common practice for
spare amplifiers (tie off as a follower, + input inside the input range), comparator use of
op-amps and Ib x R through large resistances; the handbook noise gain 1 + Rf/Ri.
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.model import Net, Node, Part, Pin
from schemcheck.report.json import to_data
from schemcheck.settings import Settings

from .circuits import circuit

P = "Vos=1mV Ib=10nA Ios=1nA Input=bipolar"


def run(*lines, samples: int = 0, **settings):
    return audit_netlist(circuit(*lines), Settings(mc_samples=samples, **settings))


def rules(result):
    return sorted((f.rule, f.severity, f.stage) for f in result.findings)


def stage(result, name):
    return next(s for s in result.stages if s.id == name)


def not_analysed(result):
    return {n.id: (n.reason, n.topology) for n in result.not_analysed}


# -- two outputs on one net -------------------------------------------------------------

TIED = ["J1 IN GND", f"U1 p=IN m=X out=X {P}", f"U2 p=IN m=X out=X unit=2 {P}",
        "R1 X m3 10k", "R2 m3 o3 10k", f"U3 p=GND m=m3 out=o3 {P}",
        "J2 IN2 GND", "R3 IN2 m4 10k", "R4 m4 o4 22k", f"U4 p=GND m=m4 out=o4 {P}"]


@pytest.mark.parametrize("samples", [0, 200], ids=["worst-case", "monte-carlo"])
def test_two_opamp_outputs_on_one_net_and_the_rest_solved(samples):
    result = run(*TIED, samples=samples)
    assert rules(result) == [("outputs-tied", "error", "U1/1")]
    finding = result.findings[0]
    assert finding.message.startswith("U1/1 output (pin 1) and U2/2 output (pin 7) both drive "
                                      "net X")
    assert finding.data["drivers"] == ["U1/1 output (pin 1)", "U2/2 output (pin 7)"]
    assert finding.data["net"] == "X"
    assert stage(result, "U1/1").status == stage(result, "U2/2").status == "outputs-tied"
    # U3 reads the tied net: its own figures are known, its total is not
    u3 = stage(result, "U3/1")
    assert u3.noise_gain == pytest.approx(2.0, rel=1e-12)  # 1 + 10k/10k
    assert u3.depends_on_undefined_output and u3.worst_case_total_v is None
    # U4 is elsewhere: solved as if nothing happened, 1 + 22k/10k = 3.2
    u4 = stage(result, "U4/1")
    assert u4.status == "ok" and u4.noise_gain == pytest.approx(3.2, rel=1e-12)
    assert u4.worst_case_over_temp_v is not None
    if samples:
        assert u4.monte_carlo_v is not None


def test_opamp_output_and_an_ic_output_pin_on_one_net():
    result = run("J1 IN GND", "R1 IN m 10k", "R2 m X 10k", f"U1 p=GND m=m out=X {P}",
                 "X1 o=X i=VCC i=GND")
    assert rules(result) == [("outputs-tied", "error", "U1/1")]
    assert "U1/1 output (pin 1) and X1 pin 1 (output) both drive net X" in \
        result.findings[0].message


@pytest.mark.parametrize("lines", [
    pytest.param(["J1 IN GND", "R1 IN m 10k", "R2 m X 10k", f"U1 p=GND m=m out=X {P}",
                  "X1 b=X i=VCC i=GND"], id="adc-or-port-pin-bidirectional"),
    pytest.param(["R1 VCC p 10k", "R2 p GND 10k", f"U1 p=p m=GND out=GND {P}"],
                 id="virtual-ground-generator-on-a-power-net"),
])
def test_not_two_outputs(lines):
    assert [f for f in run(*lines).findings if f.rule == "outputs-tied"] == []


def test_no_stage_is_unsolvable_in_silence():
    # Two followers each on the other's output: V1 = V2 + Vos1 and V2 = V1 + Vos2 have no
    # solution; and a stage whose inputs share one net.
    result = run(f"U1 p=o2 m=o1 out=o1 {P}", f"U2 p=o1 m=o2 out=o2 unit=2 {P}",
                 "R1 o m 10k", "R2 m GND 10k", f"U3 p=m m=m out=o {P}")
    assert rules(result) == [("stage-unsolvable", "warning", "U1/1"),
                             ("stage-unsolvable", "warning", "U2/2"),
                             ("stage-unsolvable", "warning", "U3/1")]
    by_stage = {f.stage: f.message for f in result.findings}
    assert "(with U2/2)" in by_stage["U1/1"]
    assert "its two inputs are on one net (m)" in by_stage["U3/1"]
    for item in to_data(result)["stages"]:
        assert item["status"] != "unsolvable" or item["id"] in by_stage


# -- spare amplifiers -------------------------------------------------------------------

IN_USE = ["J1 IN GND", "R1 IN m 10k", "R2 m o 10k", f"U1 p=GND m=m out=o {P}"]


def test_spare_with_floating_inputs_is_a_warning():
    result = run(*IN_USE, f"U1 p=NC1 m=NC2 out=NC3 unit=2 {P}")
    assert rules(result) == [("spare-inputs-floating", "warning", "U1/2")]
    assert result.findings[0].data["floating_pins"] == ["pin 5 (+)", "pin 6 (-)"]
    assert "follower" in result.findings[0].suggestion
    assert [s.id for s in result.stages] == ["U1/1"]


@pytest.mark.parametrize("spare", [
    pytest.param(f"U1 p=GND m=o2 out=o2 unit=2 {P}", id="follower-on-ground"),
    pytest.param(f"U1 p=half m=o2 out=o2 unit=2 {P}", id="follower-at-mid-supply"),
    pytest.param(f"U1 p=GND m=VEE out=o2 unit=2 {P}", id="inputs-on-rails"),
])
def test_spare_tied_off_is_neither_a_stage_nor_a_finding(spare):
    result = run(*IN_USE, "R5 VCC half 10k", "R6 half GND 10k", spare)
    assert rules(result) == []
    assert [s.id for s in result.stages] == ["U1/1"]
    assert not_analysed(result)["U1/2"][0].startswith("unused amplifier (spare")


def test_a_single_grounded_follower_is_a_stage():
    # Not a spare: no other amplifier of the part is in use.
    result = run(f"U1 p=GND m=o out=o {P}")
    assert [s.id for s in result.stages] == ["U1/1"]


# -- open loop: comparator use ----------------------------------------------------------

def test_opamp_used_as_comparator_is_info():
    result = run("J1 IN GND", "R1 VCC ref 10k", "R2 ref GND 10k", f"U1 p=IN m=ref out=out {P}")
    assert rules(result) == [("open-loop", "info", "U1/1")]
    assert "used open loop as a comparator" in result.findings[0].message
    assert not_analysed(result)["U1/1"] == ("comparator use (open loop)",
                                            "comparator (open loop)")


def test_schmitt_trigger_is_comparator_use():
    # Positive feedback only (output to the + input): a comparator with hysteresis.
    result = run("J1 IN GND", "R1 VCC ref 10k", "R2 ref GND 10k", "R3 out ref 100k",
                 f"U1 p=ref m=IN out=out {P}")
    assert rules(result) == [("open-loop", "info", "U1/1")]


@pytest.mark.parametrize("lines,why", [
    pytest.param(["J1 IN GND", "R1 VCC ref 10k", "R2 ref GND 10k",
                  f"U1 p=IN m=ref out=out lib=Invented:AMP1 desc= {P}"],
                 "an amplifier with internal gain", id="part-of-unknown-kind"),
    pytest.param(["J1 IN GND", "C1 IN x 10n", f"U1 p=x m=GND out=out {P}"],
                 "+ input (net x) has no DC path", id="input-with-no-dc-path"),
])
def test_open_loop_is_a_warning_where_the_tool_cannot_tell(lines, why):
    result = run(*lines)
    assert rules(result) == [("open-loop", "warning", "U1/1")]
    assert why in result.findings[0].message


# -- loops outside the model ------------------------------------------------------------

def test_integrator_in_a_regulator_loop_through_a_pass_transistor():
    # The op-amp drives Q1, whose emitter makes the rail VCC; VCC comes back to the - input
    # through the divider R2/R3; C1 makes it an integrator. Not a missing-feedback error.
    result = run("J1 VIN GND", "J2 REF GND", "R1 out b 1k", "Q1 b VIN VCC", "R2 VCC m 30k",
                 "R3 m GND 10k", "C1 m out 10n", f"U1 p=REF m=m out=out {P}")
    assert rules(result) == [("dc-path-unknown", "warning", "U1/1")]
    message = result.findings[0].message
    assert "an integrator (C1 from its output to its - input)" in message
    assert "Q1 (transistor) and the supply rail VCC" in message
    assert "the loop is outside the model" in message
    assert not_analysed(result)["U1/1"][1] == "integrator"


def test_integrator_in_a_loop_through_a_transistor():
    result = run("J2 REF GND", "R1 out b 1k", "Q1 b VCC e", "R2 e m 1k", "R3 e GND 10",
                 "C1 m out 10n", f"U1 p=REF m=m out=out {P}")
    assert rules(result) == [("dc-path-unknown", "warning", "U1/1")]
    assert "inside a loop that closes only through Q1 (transistor)" in \
        result.findings[0].message


# -- bias current through a large resistance --------------------------------------------

def test_large_resistance_in_a_bipolar_input_bias_path():
    # A follower behind 2.2 MΩ, Ib 50 nA: Ib x R = 110 mV; the bias-current terms at the
    # output |s_ib| Ib + |s_ios| Ios = 2.2M x 50n + 1.1M x 5n = 115.5 mV, 77 % of 150 mV.
    result = run("J1 IN GND", "R1 IN p 2.2M",
                 "U1 p=p m=out out=out Vos=1mV Ib=50nA Ios=5nA Input=bipolar DC_Budget=150mV")
    [finding] = [f for f in result.findings if f.rule == "high-bias-resistance"]
    assert finding.severity == "warning"
    assert finding.data["resistor"] == "R1"
    assert finding.data["drop_v"] == pytest.approx(50e-9 * 2.2e6, rel=1e-12)
    assert finding.data["bias_error_v"] == pytest.approx(2.2e6 * 50e-9 + 1.1e6 * 5e-9,
                                                         rel=1e-9)
    assert "Ib x R = 50 nA x 2.2 MΩ = 110 mV" in finding.message


def test_large_resistance_that_uses_little_of_the_budget_is_quiet():
    # Ib 1 nA through 2.2 MΩ: 2.31 mV of a 150 mV budget.
    result = run("J1 IN GND", "R1 IN p 2.2M",
                 "U1 p=p m=out out=out Vos=1mV Ib=1nA Ios=0.1nA Input=bipolar DC_Budget=150mV")
    assert [f for f in result.findings if f.rule == "high-bias-resistance"] == []


# -- sample-and-hold ----------------------------------------------------------------------

def test_hold_droop_of_a_fet_input_part_grows_with_temperature():
    # A FET-input follower holding C1 (10 nF) behind an analog switch: droop Ib / C =
    # 20 pA / 10 nF = 2 mV/s at 25 °C (capacitor law); FET bias currents double every
    # 10 °C (common practice, as the budget takes them): x 2^4.5 at 70 °C = 45.3 mV/s.
    netlist = circuit("J1 SIG GND", "C1 HOLD GND 10n",
                      "U1 p=HOLD m=OUT out=OUT Vos=1mV Ib=20pA Ios=5pA Input=jfet")
    switch = Part("U2", 1, "SWX-1", "Analog_Switch:Generic_SPST", "/", {"Reference": "U2"},
                  (Pin("1", "COM", "passive", 1), Pin("2", "NO", "passive", 1),
                   Pin("3", "IN", "input", 1)), description="Analog switch")
    nets = [replace(n, nodes=n.nodes + ((Node("U2", "1"),) if n.name == "HOLD" else ())
                    + ((Node("U2", "2"),) if n.name == "SIG" else ())) for n in netlist.nets]
    netlist = replace(netlist, parts=netlist.parts + (switch,),
                      nets=tuple(nets) + (Net("CTRL", (Node("U2", "3"),)),))
    result = audit_netlist(netlist, Settings(mc_samples=0))
    [finding] = result.findings
    assert (finding.rule, finding.severity) == ("hold-droop", "warning")
    assert finding.data["droop_v_per_s"] == pytest.approx(20e-12 / 10e-9, rel=1e-12)
    assert finding.data["droop_hot_v_per_s"] == pytest.approx(20e-12 * 2 ** 4.5 / 10e-9,
                                                              rel=1e-9)
    assert "2 mV/s (2 µV over a 1 ms hold) at 25 °C, 45.3 mV/s (45.3 µV) at 70 °C" in \
        finding.message


def test_hold_time_from_the_settings_file(tmp_path):
    from schemcheck.errors import ParseError
    from schemcheck.io.settings_file import load_settings

    path = tmp_path / "schemcheck.toml"
    path.write_text('hold_time = "50us"\n', encoding="utf-8")
    settings = load_settings(str(path))
    assert settings.hold_time == pytest.approx(50e-6, rel=1e-12)  # SI prefix micro
    assert settings.describe()["hold_time_s"] == settings.hold_time
    path.write_text('hold_time = "a while"\n', encoding="utf-8")
    with pytest.raises(ParseError, match="expected hold_time as a positive time"):
        load_settings(str(path))
