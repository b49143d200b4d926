"""Small invented schematics of the traps real designs hold, for the DC network tests.

Written to ``fixtures/network/`` by ``python -m tests.make_fixtures``. Each sheet holds one
trap; what it must give is stated in ``fixtures/README.md`` and asserted in
``tests/test_network_traps.py``. Pins are joined by labels placed on their ends (local
labels unless said otherwise), supplies through power symbols.
"""

from __future__ import annotations

from collections.abc import Callable

from .synth import Sheet, Symbol

OPAMP = "Amplifier_Operational:Generic_Single"
PARAMS = {"Vos": "1mV", "Ib": "10nA", "Ios": "1nA", "Input": "bipolar"}


class Drawing:
    """A sheet under construction: parts on a grid, nets by labels on pin ends."""

    def __init__(self, project: str, seed: int) -> None:
        self.sheet = Sheet(project=project, seed=seed)
        self.count = 0
        self.power = 0

    def part(self, lib_id: str, ref: str, value: str, **fields: str) -> Symbol:
        x = 38.1 + 38.1 * (self.count % 5)
        y = 38.1 + 38.1 * (self.count // 5)
        self.count += 1
        return self.sheet.place(lib_id, ref, value, x, y, fields=dict(fields))

    def opamp(self, ref: str, plus: str, minus: str, out: str, lib_id: str = OPAMP,
              value: str = "OPX-1") -> Symbol:
        fields = PARAMS
        sym = self.part(lib_id, ref, value, **fields)
        numbers = {"Comparator:Generic_Single": ("3", "2", "1")}.get(lib_id, ("3", "2", "6"))
        for number, net in zip(numbers, (plus, minus, out)):
            self.net(net, (sym, number))
        supplies = {"Comparator:Generic_Single": ("5", "4")}.get(lib_id, ("7", "4"))
        self.rail("VCC", (sym, supplies[0]))
        self.rail("VEE", (sym, supplies[1]))
        return sym

    def two_pin(self, lib_id: str, ref: str, value: str, a: str, b: str,
                pins: tuple[str, str] = ("1", "2")) -> Symbol:
        sym = self.part(lib_id, ref, value)
        self.net(a, (sym, pins[0]))
        self.net(b, (sym, pins[1]))
        return sym

    def net(self, name: str, *pins: tuple[Symbol, str], kind: str = "label") -> None:
        for sym, number in pins:
            if name in ("GND", "VCC", "VEE"):
                self.rail(name, (sym, number))
            else:
                self.sheet.label(name, sym.pin(number), kind=kind)

    def rail(self, name: str, *pins: tuple[Symbol, str]) -> None:
        for sym, number in pins:
            self.power += 1
            self.sheet.place(f"power:{name}", f"#PWR{self.power:02d}", name, *sym.pin(number))


def testpoint_summing() -> Sheet:
    """An inverting summer with a test point on its summing node."""
    d = Drawing("testpoint", 101)
    j1 = d.part("Connector:Conn_01x02", "J1", "INPUTS")
    d.net("INA", (j1, "1"))
    d.net("INB", (j1, "2"))
    d.two_pin("Device:R", "R1", "10k", "INA", "SUM")
    d.two_pin("Device:R", "R2", "10k", "INB", "SUM")
    d.two_pin("Device:R", "R3", "100k", "SUM", "OUT")
    d.opamp("U1", "GND", "SUM", "OUT")
    tp = d.part("Connector:TestPoint", "TP1", "SUM")
    d.net("SUM", (tp, "1"))
    return d.sheet


def label_summing() -> Sheet:
    """A transimpedance stage whose summing node carries a global label to another sheet."""
    d = Drawing("label", 102)
    u1 = d.opamp("U1", "GND", "SUM_LOCAL", "OUT")
    d.net("PD_NODE", (u1, "2"), kind="global_label")
    r1 = d.two_pin("Device:R", "R1", "1M", "FB_LOCAL", "OUT")
    d.net("PD_NODE", (r1, "1"), kind="global_label")
    return d.sheet


def header_feedback() -> Sheet:
    """An inverting stage whose feedback resistor is chosen by a jumper on header J1."""
    d = Drawing("header", 103)
    j2 = d.part("Connector:Conn_01x02", "J2", "INPUT")
    d.net("IN", (j2, "1"))
    d.net("GND", (j2, "2"))
    d.two_pin("Device:R", "R1", "10k", "IN", "SUM")
    j1 = d.part("Connector:Conn_01x03", "J1", "GAIN")
    d.net("FA", (j1, "1"))
    d.net("SUM", (j1, "2"))
    d.net("FB", (j1, "3"))
    d.two_pin("Device:R", "R2", "100k", "FA", "OUT")
    d.two_pin("Device:R", "R3", "47k", "FB", "OUT")
    d.opamp("U1", "GND", "SUM", "OUT")
    return d.sheet


def values() -> Sheet:
    """Values in the notations of the trade, one stage per notation."""
    d = Drawing("values", 104)
    # U1: '10 kΩ' with a space (once read as 10 Ω) and '100k'
    d.two_pin("Device:R", "R1", "10 kΩ", "GND", "S1")
    d.two_pin("Device:R", "R2", "100k", "S1", "O1")
    d.opamp("U1", "GND", "S1", "O1")
    # U2: SPICE mega '10Meg' and '1M'
    d.two_pin("Device:R", "R3", "1M", "GND", "S2")
    d.two_pin("Device:R", "R4", "10Meg", "S2", "O2")
    d.opamp("U2", "GND", "S2", "O2")
    # U3: a feedback potentiometer with its taper letter, wired as a variable resistor
    d.two_pin("Device:R", "R5", "10k", "GND", "S3")
    rv = d.part("Device:R_Potentiometer", "RV1", "100kA")
    d.net("S3", (rv, "1"))
    d.net("O3", (rv, "2"), (rv, "3"))
    d.opamp("U3", "GND", "S3", "O3")
    # U4: a house notation ('t' for trimmer) the tool cannot read without settings
    d.two_pin("Device:R", "R7", "t2k", "GND", "S4")
    d.two_pin("Device:R", "R8", "20k", "S4", "O4")
    d.opamp("U4", "GND", "S4", "O4")
    # U5: '1m' on a bias resistor: milli or mega?
    d.two_pin("Device:R", "R9", "1m", "GND", "P5")
    d.opamp("U5", "P5", "O5", "O5")
    return d.sheet


def imported_resistor() -> Sheet:
    """A non-inverting stage drawn with resistor symbols from another tool's library."""
    d = Drawing("imported", 105)
    d.two_pin("Invented_Passives:MF_RESISTOR_0402", "R1", "10k", "GND", "SUM",
              pins=("P$1", "P$2"))
    d.two_pin("Invented_Passives:MF_RESISTOR_0402", "R2", "100k", "SUM", "OUT",
              pins=("P$1", "P$2"))
    d.opamp("U1", "GND", "SUM", "OUT")
    return d.sheet


def bidirectional_driver() -> Sheet:
    """An inverting stage fed from a microcontroller's port pin (bidirectional)."""
    d = Drawing("bidir", 106)
    mcu = d.part("Invented_MCU:PORTCHIP", "U2", "MCX-8")
    d.net("PORT", (mcu, "1"))
    d.rail("VCC", (mcu, "2"))
    d.rail("GND", (mcu, "3"))
    d.two_pin("Device:R", "R1", "10k", "PORT", "SUM")
    d.two_pin("Device:R", "R2", "22k", "SUM", "OUT")
    d.opamp("U1", "GND", "SUM", "OUT")
    return d.sheet


def comparator_follower() -> Sheet:
    """A comparator symbol carrying an op-amp part, wired as a follower."""
    d = Drawing("comparator", 107)
    d.two_pin("Device:R", "R1", "100k", "GND", "IN")
    j1 = d.part("Connector:Conn_01x02", "J1", "INPUT")
    d.net("IN", (j1, "1"))
    d.net("GND", (j1, "2"))
    d.two_pin("Device:R", "R2", "10k", "VCC", "OUT")
    d.opamp("U1", "IN", "OUT", "OUT", lib_id="Comparator:Generic_Single", value="OPX-1")
    return d.sheet


def switch_bias() -> Sheet:
    """A sample-and-hold follower: its + input is reached only by an analog switch and
    the hold capacitor."""
    d = Drawing("switch", 108)
    j1 = d.part("Connector:Conn_01x02", "J1", "SIGNAL")
    d.net("SIG", (j1, "1"))
    d.net("GND", (j1, "2"))
    sw = d.part("Analog_Switch:Generic_SPST", "U2", "SWX-1")
    d.net("SIG", (sw, "2"))
    d.net("HOLD", (sw, "1"))
    d.net("SAMPLE", (sw, "3"))
    d.rail("VCC", (sw, "4"))
    d.two_pin("Device:C", "C1", "1n", "HOLD", "GND")
    d.opamp("U1", "HOLD", "OUT", "OUT")
    return d.sheet


def transistor_feedback() -> Sheet:
    """A current sink: the op-amp drives a transistor whose emitter resistor feeds back."""
    d = Drawing("transistor", 109)
    j1 = d.part("Connector:Conn_01x02", "J1", "SET_LOAD")
    d.net("SET", (j1, "1"))
    d.net("LOAD", (j1, "2"))
    d.two_pin("Device:R", "R1", "10k", "SET", "PLUS")
    d.two_pin("Device:R", "R2", "10k", "PLUS", "GND")
    d.two_pin("Device:R", "R3", "1k", "DRIVE", "BASE")
    q1 = d.part("Device:Q_NPN_BCE", "Q1", "NPX-1")
    d.net("BASE", (q1, "1"))
    d.net("LOAD", (q1, "2"))
    d.net("SENSE", (q1, "3"))
    d.two_pin("Device:R", "R4", "10", "SENSE", "GND")
    d.two_pin("Device:R", "R5", "1k", "SENSE", "MINUS")
    d.opamp("U1", "PLUS", "MINUS", "DRIVE")
    return d.sheet


def inamp_follower() -> Sheet:
    """An instrumentation amplifier (not analysed) ahead of an analysed follower."""
    d = Drawing("inamp", 110)
    j1 = d.part("Connector:Conn_01x02", "J1", "BRIDGE")
    d.net("IN_P", (j1, "1"))
    d.net("IN_N", (j1, "2"))
    ia = d.part("Amplifier_Instrumentation:Generic_InAmp", "U1", "IAX-1")
    d.net("IN_P", (ia, "3"))
    d.net("IN_N", (ia, "2"))
    d.net("IA_OUT", (ia, "6"))
    d.rail("GND", (ia, "5"))
    d.rail("VCC", (ia, "7"))
    d.rail("VEE", (ia, "4"))
    d.two_pin("Device:R", "R1", "10k", "IA_OUT", "BUF_P")
    d.opamp("U2", "BUF_P", "OUT", "OUT")
    return d.sheet


def topologies() -> Sheet:
    """One stage of each kind a reviewer names, for the topology labels."""
    d = Drawing("topologies", 111)
    j1 = d.part("Connector:Conn_01x03", "J1", "INPUTS")
    d.net("IN", (j1, "1"))
    d.net("IN2", (j1, "2"))
    d.net("GND", (j1, "3"))
    # U1: inverting with a T-network in the feedback
    d.two_pin("Device:R", "R1", "10k", "IN", "M1")
    d.two_pin("Device:R", "R2", "100k", "M1", "T1")
    d.two_pin("Device:R", "R3", "100k", "T1", "O1")
    d.two_pin("Device:R", "R4", "1k", "T1", "GND")
    d.opamp("U1", "GND", "M1", "O1")
    # U2: inverting summer about a mid-rail (R7/R8 divider, decoupled by C1)
    d.two_pin("Device:R", "R5", "10k", "IN", "M2")
    d.two_pin("Device:R", "R6", "20k", "IN2", "M2")
    d.two_pin("Device:R", "R9", "100k", "M2", "O2")
    d.two_pin("Device:R", "R7", "10k", "VCC", "P2")
    d.two_pin("Device:R", "R8", "10k", "P2", "GND")
    d.two_pin("Device:C", "C1", "10u", "P2", "GND")
    d.opamp("U2", "P2", "M2", "O2")
    # U3: transimpedance, a photodiode at the - input
    d.two_pin("Device:D", "D1", "PDX-1", "M3", "GND")
    d.two_pin("Device:R", "R10", "1M", "M3", "O3")
    d.two_pin("Device:C", "C2", "2p2", "M3", "O3")
    d.opamp("U3", "GND", "M3", "O3")
    # U4: Sallen-Key low-pass, unity gain
    d.two_pin("Device:R", "R11", "10k", "IN", "A4")
    d.two_pin("Device:R", "R12", "10k", "A4", "P4")
    d.two_pin("Device:C", "C3", "10n", "A4", "O4")
    d.two_pin("Device:C", "C4", "4n7", "P4", "GND")
    d.opamp("U4", "P4", "O4", "O4")
    # U5: multiple-feedback low-pass
    d.two_pin("Device:R", "R13", "10k", "IN", "A5")
    d.two_pin("Device:R", "R14", "10k", "A5", "O5")
    d.two_pin("Device:R", "R15", "10k", "A5", "M5")
    d.two_pin("Device:C", "C5", "10n", "A5", "GND")
    d.two_pin("Device:C", "C6", "1n", "M5", "O5")
    d.opamp("U5", "GND", "M5", "O5")
    # U6: integrator (no DC resistor across C7): a missing-feedback error
    d.two_pin("Device:R", "R16", "10k", "IN", "M6")
    d.two_pin("Device:C", "C7", "100n", "M6", "O6")
    d.opamp("U6", "GND", "M6", "O6")
    # U7: a DC follower whose gain network's foot is on C8 to ground (AC gain 101)
    d.two_pin("Device:R", "R17", "100k", "M7", "O7")
    d.two_pin("Device:R", "R18", "1k", "M7", "X7")
    d.two_pin("Device:C", "C8", "10u", "X7", "GND")
    d.opamp("U7", "IN", "M7", "O7")
    # U8: the integrator capacitor not fitted: open loop, a comparator use
    d.two_pin("Device:R", "R19", "10k", "IN", "M8")
    d.two_pin("Device:C", "C9", "DNP", "M8", "O8")
    d.opamp("U8", "GND", "M8", "O8")
    return d.sheet


def tied_outputs() -> Sheet:
    """Two followers whose outputs share one net, a stage reading it, and an independent
    inverting stage."""
    d = Drawing("tied", 112)
    j1 = d.part("Connector:Conn_01x03", "J1", "INPUTS")
    d.net("IN", (j1, "1"))
    d.net("IN2", (j1, "2"))
    d.net("GND", (j1, "3"))
    d.opamp("U1", "IN", "X", "X")
    d.opamp("U2", "IN", "X", "X")
    d.two_pin("Device:R", "R1", "10k", "X", "M3")
    d.two_pin("Device:R", "R2", "10k", "M3", "O3")
    d.opamp("U3", "GND", "M3", "O3")
    d.two_pin("Device:R", "R3", "10k", "IN2", "M4")
    d.two_pin("Device:R", "R4", "22k", "M4", "O4")
    d.opamp("U4", "GND", "M4", "O4")
    return d.sheet


SHEETS: dict[str, Callable[[], Sheet]] = {
    "testpoint_summing": testpoint_summing,
    "label_summing": label_summing,
    "header_feedback": header_feedback,
    "values": values,
    "imported_resistor": imported_resistor,
    "bidirectional_driver": bidirectional_driver,
    "comparator_follower": comparator_follower,
    "switch_bias": switch_bias,
    "transistor_feedback": transistor_feedback,
    "inamp_follower": inamp_follower,
    "topologies": topologies,
    "tied_outputs": tied_outputs,
}
