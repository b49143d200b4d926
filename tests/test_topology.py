"""Topology labels a reviewer recognises, from the DC network and where capacitors sit.

The label never changes a number: each case also checks the noise gain against the
handbook's closed form (capacitors open at DC; ideal op-amps; Franco, "Design with
Operational Amplifiers and Analog Integrated Circuits", ch. 1-3, from memory; the T-network
and multiple-feedback forms worked out by nodal analysis in the case's comment).
"""

from __future__ import annotations

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.circuit.load import load_netlist
from schemcheck.settings import Settings

from .circuits import circuit
from .conftest import FIXTURES

P = "Vos=1mV Ib=10nA Ios=1nA Input=bipolar"

#: name -> (lines, stage, label, noise gain by the closed form)
CASES = {
    # 1 + Rf/Ri = 1 + 47k/10k
    "inverting": (["J1 IN GND", "R1 IN m 10k", "R2 m out 47k", f"U1 p=GND m=m out=out {P}"],
                  "U1/1", "inverting", 5.7),
    # T feedback R2 (m-t), R3 (t-out), R4 (t-GND), Ri = R1. The - input sits at Vos, R1
    # carries Vos/R1 through R2, so V(t) = Vos (1 + R2/R1); KCL at t gives
    # NG = (1 + R2/R1)(1 + R3/R4) + R3/R1 = 11 x 101 + 10 = 1121 (not 1 + the signal gain).
    "t-network": (["J1 IN GND", "R1 IN m 10k", "R2 m t 100k", "R3 t out 100k",
                   "R4 t GND 1k", f"U1 p=GND m=m out=out {P}"],
                  "U1/1", "inverting (T-network)", 1121.0),
    # 1 + Rf/Rg = 1 + 90k/10k
    "non-inverting": (["J1 IN GND", "R1 IN p 1k", "R2 m GND 10k", "R3 m out 90k",
                       f"U1 p=p m=m out=out {P}"], "U1/1", "non-inverting", 10.0),
    "buffer": (["J1 IN GND", f"U1 p=IN m=out out=out {P}"], "U1/1", "buffer", 1.0),
    "sallen-key-lp": (["J1 IN GND", "R1 IN a 10k", "R2 a p 10k", "C1 a out 10n",
                       "C2 p GND 10n", f"U1 p=p m=out out=out {P}"],
                      "U1/1", "Sallen-Key low-pass (unity gain)", 1.0),
    "sallen-key-lp-gain": (["J1 IN GND", "R1 IN a 10k", "R2 a p 10k", "C1 a out 10n",
                            "C2 p GND 10n", "R3 m GND 10k", "R4 m out 10k",
                            f"U1 p=p m=m out=out {P}"],
                           "U1/1", "Sallen-Key low-pass (with gain)", 2.0),
    "sallen-key-hp": (["J1 IN GND", "C1 IN a 10n", "C2 a p 10n", "R1 a out 10k",
                       "R2 p GND 10k", f"U1 p=p m=out out=out {P}"],
                      "U1/1", "Sallen-Key high-pass (unity gain)", 1.0),
    "sallen-key-hp-gain": (["J1 IN GND", "C1 IN a 10n", "C2 a p 10n", "R1 a out 10k",
                            "R2 p GND 10k", "R3 m GND 10k", "R4 m out 10k",
                            f"U1 p=p m=m out=out {P}"],
                           "U1/1", "Sallen-Key high-pass (with gain)", 2.0),
    # No current in R3 (into the - input): V(a) = V(m) = Vos; KCL at a:
    # Vos/R1 + (Vos - out)/R2 = 0 -> NG = 1 + R2/R1 = 2
    "mfb-low-pass": (["J1 IN GND", "R1 IN a 10k", "R2 a out 10k", "R3 a m 10k",
                      "C1 a GND 10n", "C2 m out 1n", f"U1 p=GND m=m out=out {P}"],
                     "U1/1", "multiple-feedback filter", 2.0),
    # Band-pass: the input reaches the - input through capacitors only: NG 1 at DC
    "mfb-band-pass": (["J1 IN GND", "R1 IN a 10k", "C1 a m 10n", "C2 a out 10n",
                       "R2 m out 100k", "R3 a GND 1k", f"U1 p=GND m=m out=out {P}"],
                      "U1/1", "multiple-feedback filter", 1.0),
    # 1 + R2/R1
    "difference": (["J1 A GND", "J2 B GND", "R1 A m 10k", "R2 m out 10k", "R3 B p 10k",
                    "R4 p GND 10k", f"U1 p=p m=m out=out {P}"], "U1/1", "difference", 2.0),
    # about a mid-rail: 1 + 100k / (10k || 20k) = 16
    "inverting-summer": (["J1 A GND", "J2 B GND", "R1 A m 10k", "R2 B m 20k",
                          "R3 m out 100k", "R4 VCC p 10k", "R5 p GND 10k", "C1 p GND 10u",
                          f"U1 p=p m=m out=out {P}"], "U1/1", "inverting summer", 16.0),
    "transimpedance": (["D1 m GND", "R1 m out 1M", f"U1 p=GND m=m out=out {P}"],
                       "U1/1", "transimpedance", 1.0),
    # R across C: a lossy integrator is an inverting stage at DC, 1 + 1M/10k
    "lossy-integrator": (["J1 IN GND", "R1 IN m 10k", "C1 m out 1u", "R2 m out 1M",
                          f"U1 p=GND m=m out=out {P}"], "U1/1", "inverting", 101.0),
    # each input op-amp: 1 + Rf/Rg = 1 + 10k/1k
    "in-amp-pair": (["J1 A GND", "J2 B GND", "R1 m1 m2 1k", "R2 m1 o1 10k",
                     "R3 m2 o2 10k", f"U1 p=A m=m1 out=o1 {P}", f"U1 p=B m=m2 out=o2 unit=2 {P}",
                     "R4 o1 m3 10k", "R5 m3 o3 10k", "R6 o2 p3 10k", "R7 p3 GND 10k",
                     f"U2 p=p3 m=m3 out=o3 {P}"], "U1/2", "in-amp input pair", 11.0),
    # C1 open at DC: a follower (AC gain 1 + 100k/1k)
    "dc-follower": (["J1 IN GND", "R1 m out 100k", "R2 m x 1k", "C1 x GND 10u",
                     f"U1 p=IN m=m out=out {P}"],
                    "U1/1", "DC follower (AC-grounded gain network)", 1.0),
    # An AC-coupled inverting stage is a follower at DC: noise gain 1, never "inverting"
    "ac-coupled-inverting": (["J1 IN GND", "C1 IN x 1u", "R1 x m 10k", "R2 m out 100k",
                              f"U1 p=GND m=m out=out {P}"],
                             "U1/1", "DC follower (AC-coupled input)", 1.0),
    # U1's feedback runs through U2 (a buffer behind the divider R2/R3): o2 = o1/2 and
    # KCL at m1 (at Vos): Vos/10k + (Vos - o2)/100k = 0 -> o2 = 11 Vos, o1 = 22 Vos
    "composite-loop": (["J1 IN GND", "R1 IN m1 10k", "R2 o1 n1 10k", "R3 n1 GND 10k",
                        f"U2 p=n1 m=o2 out=o2 {P}", "R4 o2 m1 100k",
                        f"U1 p=GND m=m1 out=o1 {P}"], "U1/1", "composite loop", 22.0),
}


@pytest.mark.parametrize("name", list(CASES))
def test_label_and_noise_gain(name):
    lines, stage_id, label, gain = CASES[name]
    result = audit_netlist(circuit(*lines), Settings(mc_samples=0))
    stage = next(s for s in result.stages if s.id == stage_id)
    assert stage.topology == label
    assert stage.noise_gain == pytest.approx(gain, rel=1e-9)
    if abs(gain - 1.0) < 1e-9:
        assert not stage.topology.startswith("inverting")  # noise gain 1 is never inverting


@pytest.mark.parametrize("lines,label", [
    pytest.param(["J1 IN GND", "R1 IN m 10k", "C1 m out 1u", f"U1 p=GND m=m out=out {P}"],
                 "integrator", id="integrator"),
    pytest.param(["J1 IN GND", "R1 VCC ref 10k", "R2 ref GND 10k",
                  f"U1 p=IN m=ref out=out {P}"], "comparator (open loop)", id="comparator"),
    pytest.param(["J1 IN GND", "R1 IN m 10k", "C1 m out DNP", f"U1 p=GND m=m out=out {P}"],
                 "comparator (open loop)", id="integrator-capacitor-not-fitted"),
])
def test_labels_of_stages_without_a_dc_gain(lines, label):
    result = audit_netlist(circuit(*lines), Settings(mc_samples=0))
    labels = [s.topology for s in result.stages] + [n.topology for n in result.not_analysed]
    assert labels == [label]


def test_labels_on_a_drawn_sheet():
    # fixtures/network/topologies.kicad_sch (tests/network_sheets.py); the noise gains by
    # the closed forms above: T-network 11 x 101 + 10; summer 1 + 100k/(10k||20k).
    result = audit_netlist(load_netlist(FIXTURES / "network" / "topologies.kicad_sch"),
                           Settings(mc_samples=0))
    got = {s.id: (s.topology, s.noise_gain) for s in result.stages}
    expected = {"U1": ("inverting (T-network)", 1121.0), "U2": ("inverting summer", 16.0),
                "U3": ("transimpedance", 1.0), "U4": ("Sallen-Key low-pass (unity gain)", 1.0),
                "U5": ("multiple-feedback filter", 2.0),
                "U7": ("DC follower (AC-grounded gain network)", 1.0)}
    for name, (label, gain) in expected.items():
        assert got[name][0] == label
        assert got[name][1] == pytest.approx(gain, rel=1e-9)
    assert got["U6"] == ("integrator", None)
    assert {n.id: n.topology for n in result.not_analysed} == {"U8": "comparator (open loop)"}
    assert sorted((f.rule, f.severity, f.stage) for f in result.findings
                  if f.rule != "bias-resistor-mismatch") == [
        ("no-dc-feedback", "error", "U6"), ("open-loop", "info", "U8")]


def test_tied_outputs_on_a_drawn_sheet():
    # fixtures/network/tied_outputs.kicad_sch: U1 and U2 both drive /X; U3 reads it; U4 is
    # independent, 1 + 22k/10k = 3.2.
    result = audit_netlist(load_netlist(FIXTURES / "network" / "tied_outputs.kicad_sch"),
                           Settings(mc_samples=0))
    assert [(f.rule, f.severity) for f in result.findings] == [("outputs-tied", "error")]
    assert "U1 output (pin 6) and U2 output (pin 6) both drive net /X" in \
        result.findings[0].message
    by_id = {s.id: s for s in result.stages}
    assert by_id["U1"].status == by_id["U2"].status == "outputs-tied"
    assert by_id["U3"].depends_on_undefined_output
    assert by_id["U4"].status == "ok"
    assert by_id["U4"].noise_gain == pytest.approx(3.2, rel=1e-9)
