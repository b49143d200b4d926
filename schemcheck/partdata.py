"""The vocabulary of op-amp part data, shared by the parts-library reader, the symbol-field
reader and the engine: figure names with their units, input types, library entry keys.

Imports nothing of ours but :mod:`schemcheck.units`.
"""

from __future__ import annotations

from dataclasses import dataclass

from schemcheck.units import Quantity, parse_quantity


@dataclass(frozen=True, slots=True)
class Figure:
    """One DC figure of an op-amp: ``kind`` for the unit parser, ``unit`` as written,
    ``field`` the symbol field that carries it, ``meaning`` for people."""

    name: str
    kind: str
    unit: str
    field: str
    meaning: str
    example: str


#: Every figure a library entry (``typ`` and ``max``) or a symbol field (maximum) may give.
FIGURES: dict[str, Figure] = {f.name: f for f in (
    Figure("vos", "volt", "V", "Vos", "input offset voltage at 25 °C", "0.5mV"),
    Figure("ib", "amp", "A", "Ib", "input bias current at 25 °C (a leading ± means either "
           "polarity)", "20nA"),
    Figure("ios", "amp", "A", "Ios", "input offset current at 25 °C", "2nA"),
    Figure("tcvos", "volt_per_deg", "V/°C", "TCVos", "input offset voltage drift", "3uV/°C"),
    Figure("ib_hot", "amp", "A", "Ib_hot", "input bias current at t_hot", "150nA"),
    Figure("ios_hot", "amp", "A", "Ios_hot", "input offset current at t_hot", "20nA"),
)}

#: The names shown in reports.
DISPLAY = {"vos": "Vos", "ib": "Ib", "ios": "Ios", "tcvos": "TCVos", "ib_hot": "Ib_hot",
           "ios_hot": "Ios_hot"}

#: Input stage types and how their bias currents behave over temperature.
INPUT_TYPES: dict[str, str] = {
    "bipolar": "bipolar transistors: Ib+ and Ib- track (Ios much smaller than Ib); flat over "
               "temperature without hot values",
    "bipolar-compensated": "bipolar with internal bias-current cancellation: Ib of either "
                           "polarity, Ios comparable to Ib; flat without hot values",
    "jfet": "JFET: gate leakage, doubling about every 10 °C without hot values",
    "cmos": "CMOS: protection-diode leakage, doubling about every 10 °C without hot values",
    "chopper": "zero-drift (chopper, auto-zero): bias current set by the input switching, "
               "flat over temperature without hot values",
}

#: Keys of one library entry that are not figures.
OTHER_KEYS = ("aliases", "description", "input", "t_hot", "aol", "ib_either_sign", "rule",
              "measured")
ENTRY_KEYS = tuple(sorted((*FIGURES, *OTHER_KEYS)))
LIMIT_KEYS = ("typ", "max")


def parse_figure(name: str, text: str, what: str) -> Quantity:
    """``text`` read as figure ``name`` (SI value, sign kept; ``either_sign`` for ``±``).
    Raises :class:`schemcheck.units.ValueFormatError` naming ``what``."""
    return parse_quantity(text, FIGURES[name].kind, what=what)
