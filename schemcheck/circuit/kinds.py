"""What a part is at DC: the component-kind table (pure).

Every kind is one row: its name, how it enters the DC network (``dc``, one of
:data:`DC_BEHAVIOURS`), the words messages use for it, and how a part is known to be one.
A part is matched in three passes, each over the rows in order, the first match winning:

1. by its library symbol: the symbol name (``Device:R_Small`` -> ``R_Small``) against the
   row's ``symbols`` pattern, or the library nickname (``Analog_Switch``) against
   ``libraries``;
2. by its reference letters (``RV3`` -> ``RV``) and pin count, for symbols imported from
   other tools (``MF_Passives_RESISTOR_0402`` with reference ``R12``);
3. by words of its description, keywords, value or symbol name.

What matches no row is an ``ic`` (three pins or more: it drives nets through its output
pins) or an unmodelled two-terminal ``part``. Op-amp units and other amplifiers are
recognised from their pins first (:mod:`schemcheck.engine.stages`); their rows here only
name them. Adding a kind is one row here and, for a new ``dc`` behaviour, one stamp in
:mod:`schemcheck.engine.network`.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from schemcheck.model import Part

#: How a kind enters the DC network.
DC_BEHAVIOURS = {
    "resistance": "a resistor between its two pins, from its value",
    "divider": "a potentiometer: two resistors either side of the wiper",
    "array": "resistors between its pin pairs (or from a common pin to each other pin)",
    "capacitance": "open at DC (kept for messages: what a floating net reaches through)",
    "short": "every pin joined",
    "bridge": "the pins the symbol names as bridged joined, the others open",
    "none": "absent at DC: open and never a source",
    "port": "a connector: a net reached from outside through it is an external input",
    "unmodelled": "open, but it may conduct at DC in a way the tool does not model",
    "ic": "open; its output, bidirectional and tri-state pins drive their nets",
    "opamp": "an analysed op-amp unit (placed from its recognised pins)",
    "amplifier": "an amplifier that is not analysed: open; its voltage outputs drive",
}


@dataclass(frozen=True, slots=True)
class Kind:
    """One row of the table."""

    name: str
    dc: str
    words: str
    symbols: str = ""  # regular expression over the symbol name, whole match, any case
    libraries: tuple[str, ...] = ()  # library nicknames whose every symbol is this kind
    refs: tuple[str, ...] = ()  # reference letters
    pins: tuple[int, int] = (1, 10_000)  # pin counts for the reference and word passes
    describe: str = ""  # regular expression searched in description, keywords, value, name

    def __post_init__(self) -> None:
        if self.dc not in DC_BEHAVIOURS:
            raise ValueError(f"kind {self.name}: unknown DC behaviour {self.dc!r}")


KINDS: tuple[Kind, ...] = (
    Kind("op-amp", "opamp", "op-amp"),
    Kind("amplifier", "amplifier", "amplifier, not analysed"),
    Kind("net tie", "short", "net tie", symbols=r"NetTie.*", refs=("NT",)),
    Kind("closed jumper", "bridge", "closed jumper", symbols=r".*Jumper.*Bridged.*"),
    Kind("open jumper", "none", "open jumper", symbols=r".*Jumper.*", refs=("JP", "SJ")),
    Kind("test point", "none", "test point", symbols=r"TestPoint.*|Test_?Point.*|TP_.*",
         refs=("TP",), pins=(1, 2)),
    Kind("mechanical", "none", "mounting hole or fiducial",
         symbols=r"MountingHole.*|Fiducial.*|Mounting_?Hole.*", libraries=("Mechanical",),
         refs=("H", "MH", "FID", "MK")),
    Kind("potentiometer", "divider", "potentiometer",
         symbols=r"R_Pot.*|R_POT.*|Potentiometer.*|R_Trim.*|Trimmer.*|.*Potentiometer.*",
         refs=("RV", "VR", "POT", "RP"), pins=(3, 3)),
    Kind("resistor array", "array", "resistor array",
         symbols=r"R_Pack.*|R_Network.*|R_Array.*|RN_.*|.*Resistor_?(?:Array|Network|Pack).*",
         refs=("RN", "RA", "RP"), pins=(2, 64)),
    Kind("resistor", "resistance", "resistor",
         symbols=r"R|R_.*|Resistor.*|.*[_-]RESISTOR(?:[_-].*)?|RES|RES_.*",
         refs=("R",), pins=(2, 2)),
    Kind("capacitor", "capacitance", "capacitor",
         symbols=r"C|CP|C_.*|CP_.*|Capacitor.*|.*[_-]CAPACITOR(?:[_-].*)?|CAP|CAP_.*",
         refs=("C",), pins=(2, 2)),
    Kind("inductor", "short", "inductor",
         symbols=r"L|L_.*|Inductor.*|.*[_-]INDUCTOR(?:[_-].*)?|IND|IND_.*", refs=("L",),
         pins=(2, 2)),
    Kind("ferrite bead", "short", "ferrite bead", symbols=r"Ferrite.*|FerriteBead.*",
         refs=("FB",), pins=(2, 2)),
    Kind("fuse", "short", "fuse", symbols=r"Fuse.*|Polyfuse.*|PTC.*", refs=("F",),
         pins=(2, 2)),
    Kind("crystal", "none", "crystal", symbols=r"Crystal.*|Resonator.*", refs=("Y",),
         pins=(2, 2)),
    Kind("connector", "port", "connector",
         symbols=r"Conn_.*|Conn|AudioJack.*|Jack.*|.*Header.*|Barrel_Jack.*|BNC.*|SMA.*|"
                 r"Screw_Terminal.*|USB_.*",
         libraries=("Connector", "Connector_Generic", "Connector_Audio", "Connector_Coaxial",
                    "Connector_Generic_MountingPin", "Connector_Generic_Shielded"),
         refs=("J", "CN", "P"), describe=r"\bconnector\b|\bheader\b|\bjack\b"),
    Kind("optocoupler", "unmodelled", "optocoupler", pins=(4, 8),
         describe=r"opto-?coupler|opto-?isolator|photo-?(?:coupler|transistor|triac|relay)"),
    Kind("transistor", "unmodelled", "transistor",
         symbols=r"Q_.*|.*MOSFET.*|.*[NP]MOS.*|BJT.*|JFET.*|IGBT.*",
         libraries=("Transistor_BJT", "Transistor_FET", "Transistor_IGBT", "Transistor_Array",
                    "Transistor_Power_Module"),
         refs=("Q", "T"), pins=(3, 8),
         describe=r"transistor|MOSFET|\bJFET\b|\bBJT\b|\bIGBT\b"),
    Kind("diode", "unmodelled", "diode", symbols=r"D|D_.*|LED.*|Zener.*|Diode.*",
         libraries=("Diode", "Diode_Bridge", "Diode_Laser", "LED"), refs=("D", "LED", "ZD"),
         pins=(2, 4), describe=r"\bdiode|\bLED\b|zener|rectifier"),
    Kind("analog switch", "unmodelled", "analog switch or multiplexer",
         libraries=("Analog_Switch",),
         describe=r"analog (?:switch|multiplexer|mux)|multiplexer|demultiplexer|\bmux\b"),
    Kind("digital potentiometer", "unmodelled", "digital potentiometer",
         libraries=("Potentiometer_Digital",), describe=r"digital potentiometer"),
    Kind("relay", "unmodelled", "relay", symbols=r"Relay.*",
         libraries=("Relay", "Relay_SolidState"), refs=("K", "RL", "RLY"), pins=(3, 16),
         describe=r"\brelay\b"),
    Kind("switch", "unmodelled", "switch", symbols=r"SW_.*|Switch.*", libraries=("Switch",),
         refs=("SW", "S"), pins=(2, 8), describe=r"\bswitch\b"),
    Kind("thermistor", "unmodelled", "thermistor", symbols=r"Thermistor.*|NTC.*|PTC_.*",
         refs=("TH", "RT", "NTC"), pins=(2, 2), describe=r"thermistor"),
    Kind("battery", "unmodelled", "battery", symbols=r"Battery.*", refs=("BT", "BAT"),
         pins=(2, 2), describe=r"\bbattery\b"),
    Kind("transformer", "unmodelled", "transformer", libraries=("Transformer",),
         refs=("TR",), pins=(3, 12), describe=r"transformer"),
)

_BY_NAME = {kind.name: kind for kind in KINDS}
IC = Kind("ic", "ic", "integrated circuit")
PART = Kind("part", "unmodelled", "part of unknown kind")
OPAMP = _BY_NAME["op-amp"]
AMPLIFIER = _BY_NAME["amplifier"]


def kind(name: str) -> Kind:
    """The row called ``name``."""
    return _BY_NAME[name] if name in _BY_NAME else {"ic": IC, "part": PART}[name]


def letters(ref: str) -> str:
    """Reference letters: ``RV3`` -> ``RV``, ``#PWR01`` -> ``#PWR``."""
    match = re.match(r"^[A-Za-z#_]+", ref)
    return match.group(0).upper().rstrip("_") if match else ""


def classify(part: Part) -> Kind:
    """The kind of ``part`` (op-amps and amplifiers are recognised elsewhere)."""
    return _classify(part.lib_id, letters(part.ref), len(part.pins),
                     " ".join((part.description, part.keywords, part.value)))


@lru_cache(maxsize=8192)
def _classify(lib_id: str, ref_letters: str, pins: int, words: str) -> Kind:
    library, _, name = lib_id.rpartition(":")
    for row in KINDS:
        if row.symbols and name and _full(row.symbols, name):
            return row
        if library in row.libraries:
            return row
    for row in KINDS:
        if ref_letters in row.refs and row.pins[0] <= pins <= row.pins[1]:
            return row
    text = f"{words} {name.replace('_', ' ')}"
    for row in KINDS:
        if row.describe and row.pins[0] <= pins <= row.pins[1] and _search(row.describe, text):
            return row
    return IC if pins >= 3 else PART


@lru_cache(maxsize=256)
def _compiled(pattern: str) -> re.Pattern[str]:
    return re.compile(pattern, re.I)


def _full(pattern: str, text: str) -> bool:
    return _compiled(pattern).fullmatch(text) is not None


def _search(pattern: str, text: str) -> bool:
    return _compiled(pattern).search(text) is not None
