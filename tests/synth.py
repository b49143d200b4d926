"""Write small KiCad 9-format schematics for tests and benchmarks.

The output follows the schematic file format as documented by KiCad
(dev-docs.kicad.org, "Schematic File Format") and as the editor writes it (tabs,
``(hide yes)``, ``instances`` blocks); the library symbols below are our own generic
drawings with the pin geometry of the usual two-pin and op-amp symbols.
"""

from __future__ import annotations

import uuid as uuidlib
from dataclasses import dataclass, field

_FONT = "(effects (font (size 1.27 1.27)))"
_HIDDEN = "(effects (font (size 1.27 1.27)) (hide yes))"


def _uuid(seed: list[int]) -> str:
    seed[0] += 1
    return str(uuidlib.UUID(int=seed[0] * 0x9E3779B97F4A7C15 % (1 << 128)))


def _pin(etype: str, x: float, y: float, angle: int, name: str, number: str,
         hidden: bool = False, length: float = 2.54) -> str:
    hide = " (hide yes)" if hidden else ""
    return (f"(pin {etype} line (at {_n(x)} {_n(y)} {angle}) (length {_n(length)}){hide} "
            f"(name \"{name}\" {_FONT}) (number \"{number}\" {_FONT}))")


def _n(value: float) -> str:
    """A number as KiCad writes it: no trailing zeros, no exponent."""
    text = f"{value:.4f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _lib(name: str, units: dict[tuple[int, int], list[str]], *, reference: str = "U",
         value: str | None = None, description: str = "", keywords: str = "",
         power: bool = False) -> str:
    short = name.split(":", 1)[1]
    props = [
        f"(property \"Reference\" \"{reference}\" (at 0 5.08 0) {_FONT})",
        f"(property \"Value\" \"{value or short}\" (at 0 -5.08 0) {_FONT})",
        f"(property \"Footprint\" \"\" (at 0 0 0) {_HIDDEN})",
        f"(property \"Datasheet\" \"\" (at 0 0 0) {_HIDDEN})",
        f"(property \"Description\" \"{description}\" (at 0 0 0) {_HIDDEN})",
    ]
    if keywords:
        props.append(f"(property \"ki_keywords\" \"{keywords}\" (at 0 0 0) {_HIDDEN})")
    body = "".join(
        f"\n\t\t\t(symbol \"{short}_{u}_{b}\"\n\t\t\t\t" + "\n\t\t\t\t".join(pins) + "\n\t\t\t)"
        for (u, b), pins in units.items())
    flag = "\n\t\t\t(power)" if power else ""
    return (f"\t\t(symbol \"{name}\"{flag}\n\t\t\t(exclude_from_sim no)\n\t\t\t(in_bom yes)\n"
            f"\t\t\t(on_board yes)\n\t\t\t" + "\n\t\t\t".join(props) + body
            + "\n\t\t\t(embedded_fonts no)\n\t\t)")


def _two_pin(name: str, reference: str, description: str) -> str:
    return _lib(name, {(1, 1): [_pin("passive", 0, 3.81, 270, "~", "1", length=1.27),
                                _pin("passive", 0, -3.81, 90, "~", "2", length=1.27)]},
                reference=reference, description=description)


def _opamp_pins(unit_pins: tuple[str, str, str]) -> list[str]:
    plus, minus, out = unit_pins
    return [_pin("input", -7.62, 2.54, 0, "+", plus), _pin("input", -7.62, -2.54, 0, "-", minus),
            _pin("output", 7.62, 0, 180, "~", out)]


def _power_unit(vplus: str, vminus: str) -> list[str]:
    return [_pin("power_in", -2.54, 7.62, 270, "V+", vplus, length=3.81),
            _pin("power_in", -2.54, -7.62, 90, "V-", vminus, length=3.81)]


def _power_symbol(value: str, etype: str = "power_in", reference: str = "#PWR") -> str:
    return _lib(f"power:{value}", {(0, 1): [_pin(etype, 0, 0, 90, value, "1", hidden=True,
                                                  length=0)]},
                reference=reference, value=value, description=f"Power symbol {value}",
                power=True)


#: Library symbols by lib_id.
LIBRARY: dict[str, str] = {
    "Device:R": _two_pin("Device:R", "R", "Resistor"),
    "Device:C": _two_pin("Device:C", "C", "Unpolarized capacitor"),
    "Device:L": _two_pin("Device:L", "L", "Inductor"),
    "Device:D": _lib("Device:D", {(1, 1): [_pin("passive", -3.81, 0, 0, "K", "1"),
                                            _pin("passive", 3.81, 0, 180, "A", "2")]},
                     reference="D", description="Diode"),
    "Connector:Conn_01x02": _lib("Connector:Conn_01x02", {
        (1, 1): [_pin("passive", -5.08, 0, 0, "Pin_1", "1", length=3.81),
                 _pin("passive", -5.08, -2.54, 0, "Pin_2", "2", length=3.81)]},
        reference="J", description="Generic connector, single row, 01x02"),
    "Amplifier_Operational:Generic_Dual": _lib(
        "Amplifier_Operational:Generic_Dual",
        {(1, 1): _opamp_pins(("3", "2", "1")), (2, 1): _opamp_pins(("5", "6", "7")),
         (3, 1): _power_unit("8", "4")},
        description="Dual operational amplifier, generic", keywords="dual opamp"),
    "Amplifier_Operational:Generic_Single": _lib(
        "Amplifier_Operational:Generic_Single",
        {(1, 1): _opamp_pins(("3", "2", "6")) + [
            _pin("power_in", -2.54, 7.62, 270, "V+", "7", length=3.81),
            _pin("power_in", -2.54, -7.62, 90, "V-", "4", length=3.81)]},
        description="Single operational amplifier, generic", keywords="single opamp"),
    "Amplifier_Operational:Generic_HiddenSupply": _lib(
        "Amplifier_Operational:Generic_HiddenSupply",
        {(1, 1): _opamp_pins(("3", "2", "6")) + [
            _pin("power_in", -2.54, 7.62, 270, "VCC", "7", hidden=True, length=3.81),
            _pin("power_in", -2.54, -7.62, 90, "VEE", "4", hidden=True, length=3.81)]},
        description="Single operational amplifier, supply pins hidden", keywords="opamp"),
    "Device:R_Potentiometer": _lib("Device:R_Potentiometer", {(1, 1): [
        _pin("passive", 0, 3.81, 270, "1", "1", length=1.27),
        _pin("passive", 2.54, 0, 180, "2", "2", length=1.27),
        _pin("passive", 0, -3.81, 90, "3", "3", length=1.27)]},
        reference="RV", description="Potentiometer"),
    "Device:Q_NPN_BCE": _lib("Device:Q_NPN_BCE", {(1, 1): [
        _pin("input", -5.08, 0, 0, "B", "1"), _pin("passive", 2.54, 5.08, 270, "C", "2"),
        _pin("passive", 2.54, -5.08, 90, "E", "3")]},
        reference="Q", description="NPN transistor, base/collector/emitter"),
    "Connector:TestPoint": _lib("Connector:TestPoint", {(1, 1): [
        _pin("passive", 0, 0, 90, "1", "1", length=0)]},
        reference="TP", description="test point"),
    "Connector:Conn_01x03": _lib("Connector:Conn_01x03", {
        (1, 1): [_pin("passive", -5.08, 2.54, 0, "Pin_1", "1", length=3.81),
                 _pin("passive", -5.08, 0, 0, "Pin_2", "2", length=3.81),
                 _pin("passive", -5.08, -2.54, 0, "Pin_3", "3", length=3.81)]},
        reference="J", description="Generic connector, single row, 01x03"),
    # A resistor as another tool's library draws it: its own name, P$ pin names, no
    # description.
    "Invented_Passives:MF_RESISTOR_0402": _lib("Invented_Passives:MF_RESISTOR_0402", {
        (1, 1): [_pin("passive", 0, 3.81, 270, "P$1", "P$1", length=1.27),
                 _pin("passive", 0, -3.81, 90, "P$2", "P$2", length=1.27)]},
        reference="R"),
    "Invented_MCU:PORTCHIP": _lib("Invented_MCU:PORTCHIP", {(1, 1): [
        _pin("bidirectional", 7.62, 0, 180, "PA0", "1"),
        _pin("power_in", 0, 7.62, 270, "VDD", "2"),
        _pin("power_in", 0, -7.62, 90, "VSS", "3")]},
        reference="U", description="Microcontroller, invented, one port pin"),
    "Comparator:Generic_Single": _lib("Comparator:Generic_Single", {(1, 1): [
        _pin("input", -7.62, 2.54, 0, "+", "3"), _pin("input", -7.62, -2.54, 0, "-", "2"),
        _pin("open_collector", 7.62, 0, 180, "~", "1"),
        _pin("power_in", -2.54, 7.62, 270, "V+", "5", length=3.81),
        _pin("power_in", -2.54, -7.62, 90, "V-", "4", length=3.81)]},
        description="Comparator, generic, open-collector output", keywords="comparator"),
    "Analog_Switch:Generic_SPST": _lib("Analog_Switch:Generic_SPST", {(1, 1): [
        _pin("passive", -5.08, 0, 0, "COM", "1"), _pin("passive", 5.08, 0, 180, "NO", "2"),
        _pin("input", 0, -5.08, 90, "IN", "3"),
        _pin("power_in", 0, 5.08, 270, "VDD", "4")]},
        description="Analog switch, single pole single throw, generic",
        keywords="analog switch"),
    "Amplifier_Instrumentation:Generic_InAmp": _lib(
        "Amplifier_Instrumentation:Generic_InAmp",
        {(1, 1): _opamp_pins(("3", "2", "6")) + [
            _pin("input", 2.54, -7.62, 90, "REF", "5", length=3.81),
            _pin("power_in", -2.54, 7.62, 270, "V+", "7", length=3.81),
            _pin("power_in", -2.54, -7.62, 90, "V-", "4", length=3.81)]},
        description="Instrumentation amplifier, generic", keywords="instrumentation amplifier"),
    "power:GND": _power_symbol("GND"),
    "power:VCC": _power_symbol("VCC"),
    "power:VEE": _power_symbol("VEE"),
    "power:PWR_FLAG": _power_symbol("PWR_FLAG", "power_out", "#FLG"),
}

#: Pin positions in library coordinates (Y up) by lib_id, for tests that draw wires.
PIN_AT: dict[str, dict[str, tuple[float, float]]] = {
    "Device:R": {"1": (0, 3.81), "2": (0, -3.81)},
    "Device:C": {"1": (0, 3.81), "2": (0, -3.81)},
    "Device:L": {"1": (0, 3.81), "2": (0, -3.81)},
    "Device:D": {"1": (-3.81, 0), "2": (3.81, 0)},
    "Connector:Conn_01x02": {"1": (-5.08, 0), "2": (-5.08, -2.54)},
    "Amplifier_Operational:Generic_Dual": {
        "3": (-7.62, 2.54), "2": (-7.62, -2.54), "1": (7.62, 0),
        "5": (-7.62, 2.54), "6": (-7.62, -2.54), "7": (7.62, 0),
        "8": (-2.54, 7.62), "4": (-2.54, -7.62)},
    "Amplifier_Operational:Generic_Single": {
        "3": (-7.62, 2.54), "2": (-7.62, -2.54), "6": (7.62, 0),
        "7": (-2.54, 7.62), "4": (-2.54, -7.62)},
    "Amplifier_Operational:Generic_HiddenSupply": {
        "3": (-7.62, 2.54), "2": (-7.62, -2.54), "6": (7.62, 0),
        "7": (-2.54, 7.62), "4": (-2.54, -7.62)},
    "Device:R_Potentiometer": {"1": (0, 3.81), "2": (2.54, 0), "3": (0, -3.81)},
    "Device:Q_NPN_BCE": {"1": (-5.08, 0), "2": (2.54, 5.08), "3": (2.54, -5.08)},
    "Connector:TestPoint": {"1": (0, 0)},
    "Connector:Conn_01x03": {"1": (-5.08, 2.54), "2": (-5.08, 0), "3": (-5.08, -2.54)},
    "Invented_Passives:MF_RESISTOR_0402": {"P$1": (0, 3.81), "P$2": (0, -3.81)},
    "Invented_MCU:PORTCHIP": {"1": (7.62, 0), "2": (0, 7.62), "3": (0, -7.62)},
    "Comparator:Generic_Single": {"3": (-7.62, 2.54), "2": (-7.62, -2.54), "1": (7.62, 0),
                                  "5": (-2.54, 7.62), "4": (-2.54, -7.62)},
    "Analog_Switch:Generic_SPST": {"1": (-5.08, 0), "2": (5.08, 0), "3": (0, -5.08),
                                   "4": (0, 5.08)},
    "Amplifier_Instrumentation:Generic_InAmp": {
        "3": (-7.62, 2.54), "2": (-7.62, -2.54), "6": (7.62, 0), "5": (2.54, -7.62),
        "7": (-2.54, 7.62), "4": (-2.54, -7.62)},
    "power:GND": {"1": (0, 0)}, "power:VCC": {"1": (0, 0)}, "power:VEE": {"1": (0, 0)},
    "power:PWR_FLAG": {"1": (0, 0)},
}


def pin_position(x: float, y: float, angle: int, mirror: str, local: tuple[float, float]
                 ) -> tuple[float, float]:
    """Sheet position of a library pin, by the rule in KiCad's file-format docs
    (library Y up; rotate counter-clockwise on screen; then mirror)."""
    px, py = local[0], -local[1]
    for _ in range((angle // 90) % 4):
        px, py = py, -px
    if mirror == "x":
        py = -py
    elif mirror == "y":
        px = -px
    return (round(x + px, 4), round(y + py, 4))


@dataclass
class Symbol:
    lib_id: str
    ref: str
    value: str
    x: float
    y: float
    angle: int = 0
    mirror: str = ""
    unit: int = 1
    fields: dict[str, str] = field(default_factory=dict)
    dnp: bool = False
    exclude_from_sim: bool = False
    instances: list[tuple[str, str, int]] | None = None  # (path, reference, unit)
    lib_name: str = ""

    def pin(self, number: str) -> tuple[float, float]:
        return pin_position(self.x, self.y, self.angle, self.mirror, PIN_AT[self.lib_id][number])


@dataclass
class Sheet:
    """One schematic file under construction."""

    project: str = "synth"
    seed: int = 1
    symbols: list[Symbol] = field(default_factory=list)
    items: list[str] = field(default_factory=list)
    extra_libs: dict[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        self._seed = [self.seed * 1_000_003]
        self.uuid = _uuid(self._seed)

    def place(self, lib_id: str, ref: str, value: str, x: float, y: float, **kw) -> Symbol:
        symbol = Symbol(lib_id, ref, value, x, y, **kw)
        self.symbols.append(symbol)
        return symbol

    def wire(self, a: tuple[float, float], b: tuple[float, float]) -> None:
        self.items.append(f"\t(wire\n\t\t(pts\n\t\t\t(xy {_n(a[0])} {_n(a[1])}) (xy {_n(b[0])} "
                          f"{_n(b[1])})\n\t\t)\n\t\t(stroke\n\t\t\t(width 0)\n\t\t\t(type default)"
                          f"\n\t\t)\n\t\t(uuid \"{_uuid(self._seed)}\")\n\t)")

    def path(self, *points: tuple[float, float]) -> None:
        for a, b in zip(points, points[1:]):
            self.wire(a, b)

    def junction(self, p: tuple[float, float]) -> None:
        self.items.append(f"\t(junction\n\t\t(at {_n(p[0])} {_n(p[1])})\n\t\t(diameter 0)\n"
                          f"\t\t(color 0 0 0 0)\n\t\t(uuid \"{_uuid(self._seed)}\")\n\t)")

    def no_connect(self, p: tuple[float, float]) -> None:
        self.items.append(f"\t(no_connect\n\t\t(at {_n(p[0])} {_n(p[1])})\n"
                          f"\t\t(uuid \"{_uuid(self._seed)}\")\n\t)")

    def label(self, name: str, p: tuple[float, float], kind: str = "label",
              angle: int = 0) -> None:
        shape = "\n\t\t(shape input)" if kind != "label" else ""
        self.items.append(f"\t({kind} \"{name}\"{shape}\n\t\t(at {_n(p[0])} {_n(p[1])} {angle})"
                          f"\n\t\t{_FONT}\n\t\t(uuid \"{_uuid(self._seed)}\")\n\t)")

    def sheet(self, name: str, file: str, x: float, y: float,
              pins: list[tuple[str, tuple[float, float]]], *, dnp: bool = False,
              uuid: str | None = None) -> str:
        sheet_uuid = uuid or _uuid(self._seed)
        pin_text = "".join(
            f"\n\t\t(pin \"{n}\" input\n\t\t\t(at {_n(p[0])} {_n(p[1])} 180)\n\t\t\t"
            f"(uuid \"{_uuid(self._seed)}\")\n\t\t\t{_FONT}\n\t\t)" for n, p in pins)
        self.items.append(
            f"\t(sheet\n\t\t(at {_n(x)} {_n(y)})\n\t\t(size 20 20)\n\t\t(exclude_from_sim no)"
            f"\n\t\t(in_bom yes)\n\t\t(on_board yes)\n\t\t(dnp {'yes' if dnp else 'no'})\n"
            f"\t\t(stroke\n\t\t\t(width 0.1524)\n\t\t\t(type solid)\n\t\t)\n\t\t(fill\n\t\t\t"
            f"(color 0 0 0 0.0000)\n\t\t)\n\t\t(uuid \"{sheet_uuid}\")\n"
            f"\t\t(property \"Sheetname\" \"{name}\"\n\t\t\t(at {_n(x)} {_n(y - 1)} 0)\n\t\t\t"
            f"{_FONT}\n\t\t)\n\t\t(property \"Sheetfile\" \"{file}\"\n\t\t\t(at {_n(x)} "
            f"{_n(y + 21)} 0)\n\t\t\t{_HIDDEN}\n\t\t){pin_text}\n\t\t(instances\n\t\t\t"
            f"(project \"{self.project}\"\n\t\t\t\t(path \"/{self.uuid}\"\n\t\t\t\t\t"
            f"(page \"2\")\n\t\t\t\t)\n\t\t\t)\n\t\t)\n\t)")
        return sheet_uuid

    def _symbol_text(self, s: Symbol) -> str:
        mirror = f"\n\t\t(mirror {s.mirror})" if s.mirror else ""
        lib_name = f"\n\t\t(lib_name \"{s.lib_name}\")" if s.lib_name else ""
        fields = {"Reference": s.ref, "Value": s.value, "Footprint": "", "Datasheet": ""}
        fields.update(s.fields)
        props = "".join(f"\n\t\t(property \"{k}\" \"{v}\"\n\t\t\t(at {_n(s.x)} {_n(s.y)} 0)"
                        f"\n\t\t\t{_FONT if k in ('Reference', 'Value') else _HIDDEN}\n\t\t)"
                        for k, v in fields.items())
        pins = "".join(f"\n\t\t(pin \"{num}\"\n\t\t\t(uuid \"{_uuid(self._seed)}\")\n\t\t)"
                       for num in PIN_AT.get(s.lib_id, {}))
        insts = s.instances or [(f"/{self.uuid}", s.ref, s.unit)]
        inst_text = "".join(f"\n\t\t\t\t(path \"{p}\"\n\t\t\t\t\t(reference \"{r}\")\n\t\t\t\t\t"
                            f"(unit {u})\n\t\t\t\t)" for p, r, u in insts)
        return (f"\t(symbol\n\t\t(lib_id \"{s.lib_id}\"){lib_name}\n\t\t(at {_n(s.x)} {_n(s.y)} "
                f"{s.angle}){mirror}\n\t\t(unit {s.unit})\n\t\t(exclude_from_sim "
                f"{'yes' if s.exclude_from_sim else 'no'})\n\t\t(in_bom yes)\n\t\t(on_board yes)"
                f"\n\t\t(dnp {'yes' if s.dnp else 'no'})\n\t\t(uuid \"{_uuid(self._seed)}\")"
                f"{props}{pins}\n\t\t(instances\n\t\t\t(project \"{self.project}\"{inst_text}"
                f"\n\t\t\t)\n\t\t)\n\t)")

    def text(self) -> str:
        libs = dict(self.extra_libs)
        for s in self.symbols:
            key = s.lib_name or s.lib_id
            libs.setdefault(key, LIBRARY[s.lib_id].replace(f"(symbol \"{s.lib_id}\"",
                                                           f"(symbol \"{key}\"", 1))
        parts = [f"(kicad_sch\n\t(version 20250114)\n\t(generator \"eeschema\")\n"
                 f"\t(generator_version \"9.0\")\n\t(uuid \"{self.uuid}\")\n\t(paper \"A4\")\n"
                 "\t(lib_symbols\n" + "\n".join(libs[k] for k in sorted(libs)) + "\n\t)"]
        parts += self.items
        parts += [self._symbol_text(s) for s in self.symbols]
        parts.append("\t(sheet_instances\n\t\t(path \"/\"\n\t\t\t(page \"1\")\n\t\t)\n\t)")
        parts.append("\t(embedded_fonts no)\n)\n")
        return "\n".join(parts)
