"""What a part is at DC: the component-kind table and how each kind enters the network.

Outside sources: the editor's own library names and reference letters (KiCad's
libraries: ``Device:R_Pack04`` pins R1.1..R4.2, ``Device:R_Network04`` a common pin,
``Jumper:SolderJumper_3_Bridged12`` pins 1-2 joined, ``Connector:TestPoint``); the
conventions of IEC 60750 / IEEE 315 for reference letters (R resistor, RN network, RV
variable resistor, C, L, F fuse, FB ferrite bead, Q transistor, D diode, K relay, J
connector, TP test point; common practice); handbook noise gains (1 + Rf/Ri; a follower
is 1) for the stages built here.
"""

from __future__ import annotations

import pytest

from schemcheck.audit import audit_netlist
from schemcheck.circuit.kinds import KINDS, classify
from schemcheck.engine.network import build_network
from schemcheck.engine.stages import recognise
from schemcheck.model import Net, Netlist, Node, Part, Pin
from schemcheck.settings import Settings

from .conftest import stages_as_data

OPAMP_PINS = (("3", "+", "input"), ("2", "-", "input"), ("1", "~", "output"))
PARAMS = {"Vos": "1mV", "Ib": "10nA", "Ios": "1nA", "Input": "bipolar"}


class Board:
    """A netlist written part by part: ``add(ref, lib, value, {pin: net}, ...)``."""

    def __init__(self) -> None:
        self.parts: list[Part] = []
        self.nets: dict[str, list[Node]] = {}

    def add(self, ref: str, lib_id: str, value: str, pins: dict[str, str],
            types: dict[str, str] | None = None, names: dict[str, str] | None = None,
            unit: int = 1, unit_count: int = 1, description: str = "",
            **fields: str) -> None:
        types = types or {}
        names = names or {}
        part_pins = tuple(Pin(n, names.get(n, "~"), types.get(n, "passive"), unit)
                          for n in pins)
        self.parts.append(Part(ref, unit, value, lib_id, "/",
                               {"Reference": ref, "Value": value, **fields}, part_pins,
                               unit_count=unit_count, description=description))
        for number, net in pins.items():
            if net:
                self.nets.setdefault(net, []).append(Node(ref, number))

    def opamp(self, ref: str, plus: str, minus: str, out: str, unit: int = 1,
              **extra: str) -> None:
        numbers = ("3", "2", "1") if unit == 1 else ("5", "6", "7")
        pins = dict(zip(numbers, (plus, minus, out)))
        self.add(ref, "Amplifier_Operational:Generic", "OPX-1", pins,
                 {n: t for n, (_, _, t) in zip(numbers, OPAMP_PINS)},
                 {n: name for n, (_, name, _) in zip(numbers, OPAMP_PINS)},
                 unit=unit, unit_count=2, description="Operational amplifier, generic",
                 **{**PARAMS, **extra})

    def netlist(self) -> Netlist:
        return Netlist(tuple(Net(name, tuple(nodes), True, name == "GND", (),
                                 "power" if name in ("GND", "VCC") else "label")
                             for name, nodes in self.nets.items()), tuple(self.parts),
                       source="board", format="test")

    def audit(self, **settings) -> object:
        return stages_as_data(audit_netlist(self.netlist(), Settings(mc_samples=0, **settings)))


def _part(lib_id: str, ref: str, pins: int = 2, description: str = "", value: str = "x"
          ) -> Part:
    return Part(ref, 1, value, lib_id, "/", {}, tuple(Pin(str(i + 1), "~", "passive")
                                                      for i in range(pins)),
                description=description)


@pytest.mark.parametrize(("lib_id", "ref", "pins", "description", "kind"), [
    ("Device:R", "R1", 2, "", "resistor"),
    ("Device:R_Small_US", "R2", 2, "", "resistor"),
    ("Invented_Passives:MF_Passives_RESISTOR_0402", "R12", 2, "", "resistor"),
    ("Eagle_import:XYZ_0402", "R7", 2, "", "resistor"),  # by reference letters
    ("Device:R_Potentiometer", "RV1", 3, "", "potentiometer"),
    ("Eagle_import:TRIM_3", "VR2", 3, "", "potentiometer"),
    ("Device:R_Pack04", "RN1", 8, "", "resistor array"),
    ("Eagle_import:RARRAY", "RN2", 2, "", "resistor array"),
    ("Device:C", "C1", 2, "", "capacitor"),
    ("Device:L", "L1", 2, "", "inductor"),
    ("Device:FerriteBead_Small", "FB1", 2, "", "ferrite bead"),
    ("Device:Fuse", "F1", 2, "", "fuse"),
    ("Device:NetTie_2", "NT1", 2, "", "net tie"),
    ("Jumper:SolderJumper_3_Bridged12", "JP1", 3, "", "closed jumper"),
    ("Jumper:SolderJumper_2_Open", "JP2", 2, "", "open jumper"),
    ("Connector:TestPoint", "TP1", 1, "", "test point"),
    ("Mechanical:MountingHole", "H1", 1, "", "mechanical"),
    ("Connector_Generic:Conn_01x03", "J1", 3, "", "connector"),
    ("Connector:Conn_01x03_Pin", "J5", 3, "", "connector"),
    ("Device:Q_NPN_BCE", "Q1", 3, "", "transistor"),
    ("Transistor_FET:BSS138", "Q2", 3, "", "transistor"),
    ("Device:D", "D1", 2, "", "diode"),
    ("Analog_Switch:CD4052B", "U3", 16, "", "analog switch"),
    ("74xx:CD74HC4067M", "U4", 24, "16-Channel Analog Multiplexer/Demultiplexer",
     "analog switch"),
    ("Relay:G5V-1", "K1", 6, "", "relay"),
    ("MCU_Invented:MCX-8", "U5", 20, "Microcontroller", "ic"),
    ("Invented:BUZZ", "BZ1", 2, "", "part"),
])
def test_classification(lib_id, ref, pins, description, kind):
    assert classify(_part(lib_id, ref, pins, description)).name == kind


def test_every_kind_has_a_known_dc_behaviour():
    names = [k.name for k in KINDS]
    assert len(names) == len(set(names))
    assert {"resistor", "capacitor", "inductor", "op-amp", "connector"} <= set(names)


def test_resistor_array_pairs_by_pin_name():
    # R_Pack04: R1.1/R1.2 ... isolated pairs (KiCad's pin names).
    board = Board()
    names = {"1": "R1.1", "2": "R2.1", "3": "R3.1", "4": "R4.1", "5": "R4.2", "6": "R3.2",
             "7": "R2.2", "8": "R1.2"}
    board.add("RN1", "Device:R_Pack04", "10k",
              {n: f"N{n}" for n in names}, names=names)
    network = build_network(board.netlist(), [], [])
    pairs = sorted(tuple(sorted((r.a, r.b))) for r in network.resistors)
    assert pairs == [("N1", "N8"), ("N2", "N7"), ("N3", "N6"), ("N4", "N5")]
    assert {r.ohms for r in network.resistors} == {10e3}


def test_resistor_array_drawn_as_units_and_bussed():
    board = Board()
    for unit, (a, b) in enumerate((("A1", "B1"), ("A2", "B2")), start=1):
        board.add("RN2", "Invented:R_Array", "510R", {str(unit): a, str(9 - unit): b},
                  unit=unit, unit_count=4)
    names = {"1": "common", "2": "R1", "3": "R2"}
    board.add("RN3", "Device:R_Network02", "1k", {"1": "COM", "2": "X", "3": "Y"},
              names=names)
    network = build_network(board.netlist(), [], [])
    pairs = sorted((r.ref, tuple(sorted((r.a, r.b))), r.ohms) for r in network.resistors)
    assert pairs == [("RN2/1", ("A1", "B1"), 510.0), ("RN2/2", ("A2", "B2"), 510.0),
                     ("RN3(R1)", ("COM", "X"), 1e3), ("RN3(R2)", ("COM", "Y"), 1e3)]


def test_shorts_and_jumpers_as_drawn():
    board = Board()
    board.add("L1", "Device:L", "10u", {"1": "A", "2": "B"})
    board.add("F1", "Device:Fuse", "1A", {"1": "B", "2": "C"})
    board.add("FB1", "Device:FerriteBead", "600R", {"1": "C", "2": "D"})
    board.add("JP1", "Jumper:SolderJumper_3_Bridged12", "JP", {"1": "D", "2": "E", "3": "F"})
    board.add("JP2", "Jumper:SolderJumper_2_Open", "JP", {"1": "F", "2": "G"})
    network = build_network(board.netlist(), [], [])
    assert len({network.net(n) for n in "ABCDE"}) == 1
    assert network.net("F") != network.net("E") and network.net("G") != network.net("F")
    assert network.kinds["JP2"] == "open jumper"


def test_capacitor_marked_not_fitted_is_absent():
    board = Board()
    board.add("C1", "Device:C", "DNP", {"1": "P", "2": "GND"})
    board.add("C2", "Device:C", "100n", {"1": "P", "2": "GND"})
    network = build_network(board.netlist(), [], [])
    assert [c[0] for c in network.capacitors] == ["C2"]


def test_multi_unit_part_keeps_every_unit_nets():
    # A dual analog switch drawn as two units: the + input reaches unit 1 only, and the
    # stage is not analysed naming the switch (once, the nets of unit 2 overwrote it); with
    # the capacitor on the held net it is a sample-and-hold.
    board = Board()
    desc = "Dual analog switch, generic"
    board.add("U2", "Analog_Switch:Generic_Dual", "SWX-2", {"1": "HOLD", "2": "SIG"},
              unit=1, unit_count=2, description=desc)
    board.add("U2", "Analog_Switch:Generic_Dual", "SWX-2", {"3": "OTHER", "4": "SIG2"},
              unit=2, unit_count=2, description=desc)
    board.add("R1", "Device:R", "10k", {"1": "SIG", "2": "GND"})
    board.add("C1", "Device:C", "1n", {"1": "HOLD", "2": "GND"})
    board.opamp("U1", "HOLD", "OUT", "OUT")
    result = board.audit()
    assert [(f.rule, f.severity) for f in result.findings] == [("hold-droop", "warning")]
    assert "U2 (analog switch or multiplexer)" in result.findings[0].message
    network = build_network(board.netlist(), *recognise(board.netlist().parts))
    assert network.open_parts["U2"] == {"HOLD", "SIG", "OTHER", "SIG2"}


def test_feedback_pin_tied_to_minus_makes_a_follower():
    board = Board()
    pins = {"1": "FBNET", "3": "FBNET", "4": "IN", "6": "OUT"}
    board.add("FL1", "Eagle_import:OPX-859", "OPX-859", pins,
              {"1": "input", "3": "input", "4": "input", "6": "output"},
              {"1": "FB", "3": "IN-", "4": "IN+", "6": "OUT"},
              description="FET input amplifier", **PARAMS)
    board.add("R1", "Device:R", "1k", {"1": "IN", "2": "GND"})
    result = board.audit()
    (stage,) = result.stages
    assert stage["noise_gain"] == pytest.approx(1.0, rel=1e-12)  # a follower
    assert stage["topology"] == "buffer"


def test_amplifier_with_no_feedback_at_all_is_open_loop_not_an_error():
    # A current-sense amplifier from a project library: five pins like an op-amp, no
    # description, output back to nothing.
    board = Board()
    pins = {"1": "OUT", "3": "SENSE_P", "4": "SENSE_N", "5": "VCC", "2": "GND"}
    board.add("U7", "Project:CSA-50", "CSX-50", pins,
              {"1": "output", "3": "input", "4": "input", "5": "power_in", "2": "power_in"},
              {"1": "OUT", "3": "+", "4": "-", "5": "V+", "2": "V-"}, **PARAMS)
    board.add("R1", "Device:R", "10m", {"1": "SENSE_P", "2": "SENSE_N"})  # milli: ambiguous?
    board.add("R2", "Device:R", "1k", {"1": "SENSE_N", "2": "GND"})
    board.add("R3", "Device:R", "1k", {"1": "SENSE_P", "2": "GND"})
    result = board.audit(values={"R1": "10mR"})
    assert [(f.rule, f.severity, f.ref) for f in result.findings] == [
        ("open-loop", "warning", "U7")]
    assert result.stages == []


def test_current_output_is_not_a_source():
    # A current-output DAC (IOUT) into a transimpedance stage: its pin does not fix the
    # summing node, so the stage keeps its feedback (noise gain 1).
    board = Board()
    board.add("U3", "Analog_DAC:Invented_IDAC", "IDX-1", {"1": "SUM", "2": "GND", "3": "VCC"},
              {"1": "output", "2": "power_in", "3": "power_in"},
              {"1": "IOUT", "2": "GND", "3": "VDD"}, description="Current output DAC")
    board.add("R1", "Device:R", "10k", {"1": "SUM", "2": "OUT"})
    board.opamp("U1", "GND", "SUM", "OUT")
    result = board.audit()
    (stage,) = result.stages
    assert stage["status"] == "ok" and stage["noise_gain"] == pytest.approx(1.0, rel=1e-12)


def test_port_pin_inside_a_transistor_loop_is_left_open():
    # An ADC pin (bidirectional port) on the sense node of a current sink: fixing it
    # would cut the loop through the transistor, so it is left open and the stage is
    # not analysed for its feedback through Q1 (not called open-loop).
    board = Board()
    board.add("U2", "MCU_Invented:MCX-8", "MCX-8", {"1": "SENSE", "2": "DAC", "3": "VCC"},
              {"1": "bidirectional", "2": "bidirectional", "3": "power_in"},
              {"1": "PA0", "2": "PA4", "3": "VDD"}, description="Microcontroller")
    board.add("R1", "Device:R", "10k", {"1": "DAC", "2": "PLUS"})
    board.add("R2", "Device:R", "10k", {"1": "PLUS", "2": "GND"})
    board.add("R3", "Device:R", "1k", {"1": "DRIVE", "2": "GATE"})
    board.add("Q1", "Transistor_FET:Invented_NMOS", "NMX-1", {"1": "GATE", "2": "LOAD",
                                                               "3": "SENSE"})
    board.add("R4", "Device:R", "10", {"1": "SENSE", "2": "GND"})
    board.add("R5", "Device:R", "1k", {"1": "SENSE", "2": "MINUS"})
    board.opamp("U1", "PLUS", "MINUS", "DRIVE")
    result = board.audit()
    assert [(f.rule, f.ref) for f in result.findings] == [("dc-path-unknown", "U1")]
    assert "Q1 (transistor)" in result.findings[0].message
    network = build_network(board.netlist(), *recognise(board.netlist().parts))
    assert "SENSE" not in network.fixed
    assert network.fixed["DAC"] == "driven by U2 pin 2 (bidirectional)"
    assert ("net SENSE: driven by U2 pin 1 (bidirectional), left open: it lies on a path "
            "between U1/1's output and its inputs") in network.assumptions


def test_stage_fed_by_a_stage_not_analysed_excludes_it():
    # U1's feedback runs through a transistor (not analysed); U2, an inverting stage
    # fed from U1's output, is analysed and says its totals leave U1 out.
    board = Board()
    board.add("R1", "Device:R", "1k", {"1": "DRIVE", "2": "BASE"})
    board.add("Q1", "Device:Q_NPN_BCE", "NPX-1", {"1": "BASE", "2": "VCC", "3": "EMIT"})
    board.add("R2", "Device:R", "1k", {"1": "EMIT", "2": "GND"})
    board.add("R3", "Device:R", "1k", {"1": "EMIT", "2": "MINUS"})
    board.add("R4", "Device:R", "10k", {"1": "REF", "2": "GND"})
    board.opamp("U1", "REF", "MINUS", "DRIVE", unit=1)
    board.add("R5", "Device:R", "10k", {"1": "DRIVE", "2": "SUM"})
    board.add("R6", "Device:R", "20k", {"1": "SUM", "2": "OUT"})
    board.opamp("U1", "GND", "SUM", "OUT", unit=2)
    result = board.audit()
    (stage,) = result.stages
    assert (stage["ref"], stage["unit"]) == ("U1", 2)
    assert stage["noise_gain"] == pytest.approx(3.0, rel=1e-12)  # 1 + 20k/10k
    assert stage["excludes"] == ["U1/1"]
    assert [item["reason"] for item in result.not_analysed] == [
        "DC feedback can only run through Q1 (transistor)"]


def test_port_pin_named_io_drives_its_net():
    # Module pins named IO0, IO2 ... are ports, not current outputs: 1 + 22k/10k = 3.2.
    board = Board()
    board.add("U3", "RF_Module:Invented_Module", "MODX-1", {"1": "PORT", "2": "GND", "3": "VCC"},
              {"1": "bidirectional", "2": "power_in", "3": "power_in"},
              {"1": "IO2", "2": "GND", "3": "3V3"}, description="Radio module")
    board.add("R1", "Device:R", "10k", {"1": "PORT", "2": "SUM"})
    board.add("R2", "Device:R", "22k", {"1": "SUM", "2": "OUT"})
    board.opamp("U1", "GND", "SUM", "OUT")
    (stage,) = board.audit().stages
    assert stage["noise_gain"] == pytest.approx(3.2, rel=1e-12)
