"""Recognise op-amp amplifier units among the parts (pure).

A unit is an op-amp when it has one non-inverting input, one inverting input and one
output, judged from pin names *and* electrical types *and* the part's description:

* inputs are pins named ``+``/``-``, ``IN+``/``IN-``, ``+IN``/``-IN``, ``INP``/``INN``,
  ``NI``/``INV`` (and numbered forms ``IN1+``...), of type input, passive or
  bidirectional (converted libraries mark every pin bidirectional); supply pins
  (``V+``, ``VCC``, power types) are never inputs;
* the output is the one pin of type output (or, where every pin is bidirectional, the
  one named ``OUT``);
* comparators, transconductance amplifiers, instrumentation, fully differential and
  variable-gain amplifiers are recognised as amplifiers but not analysed, and listed;
* battery cells, diode bridges and other parts with ``+``/``-`` pins have no output and
  are not amplifiers at all.

The field ``Opamp`` (case-insensitive) forces (``yes``) or forbids (``no``) recognition.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from schemcheck.model import Part, Pin

_PLUS = re.compile(r"^(?:\+|IN\+|\+IN|INP|NI|NON[-_]?INV|V?IN_?P|IN\s*\+|\+\s*IN)$", re.I)
_MINUS = re.compile(r"^(?:-|IN-|-IN|INN|INM|INV|V?IN_?N|IN\s*-|-\s*IN)$", re.I)
_CHANNEL_PLUS = re.compile(r"^(?:IN|\+IN|-?)(\d+)\+$|^\+IN(\d+)$|^IN(\d+)P$", re.I)
_CHANNEL_MINUS = re.compile(r"^(?:IN)(\d+)-$|^-IN(\d+)$|^IN(\d+)N$", re.I)
_OUT = re.compile(r"^(?:OUT|VOUT|V_?O|OUTPUT)(\d*)$", re.I)
_SUPPLY = re.compile(r"^(?:V\+|V-|\+V|-V|VCC|VEE|VDD|VSS|V_?\{?(?:CC|EE|DD|SS|S\+|S-)\}?|"
                     r"VS\+|VS-|\+VS|-VS|GND|AGND|V\+S|V-S|VPOS|VNEG)$", re.I)
_INPUT_TYPES = {"input", "passive", "bidirectional", "tri_state", "unspecified"}
_NOT_ANALYSED = [
    (re.compile(r"comparator", re.I), "comparator"),
    (re.compile(r"transconductance|\bOTA\b", re.I), "transconductance amplifier"),
    (re.compile(r"instrumentation", re.I), "instrumentation amplifier"),
    (re.compile(r"fully[- ]differential|differential (?:amplifier|ADC driver)|\bFDA\b", re.I),
     "fully differential amplifier"),
    (re.compile(r"variable[- ]gain|\bVGA\b|programmable[- ]gain|\bPGA\b", re.I),
     "variable-gain amplifier"),
    (re.compile(r"current[- ]sense", re.I), "current-sense amplifier"),
]
_OPAMP_WORDS = re.compile(r"op[- ]?amp|operational amplifier|amplifier", re.I)


@dataclass(frozen=True, slots=True)
class OpampUnit:
    """One amplifier of a part: the pins that make it an op-amp."""

    part: Part
    plus: Pin
    minus: Pin
    out: Pin
    channel: int | None = None  # several amplifiers drawn in one unit

    @property
    def key(self) -> tuple[str, int, int | None]:
        return (self.part.ref, self.part.unit, self.channel)

    @property
    def name(self) -> str:
        """The stage identifier every report uses (see :func:`amplifier_name`)."""
        return amplifier_name(self.part, self.channel)


def amplifier_name(part: Part, channel: int | None = None) -> str:
    """One amplifier's identifier, the same whether the design was read from the schematic
    or from its exported netlist: the reference alone for a part with one amplifier;
    ``U8/2`` for the second amplifier, numbered by its unit in a multi-unit symbol or by
    its channel where one unit holds several (an exported netlist has no units: its
    amplifiers are numbered by output pin, which for the usual dual and quad pinouts is
    the unit order); ``U8/1.2`` only where several units each hold several amplifiers."""
    if channel is None:
        return part.ref if part.unit_count <= 1 else f"{part.ref}/{part.unit}"
    if part.unit_count <= 1:
        return f"{part.ref}/{channel}"
    return f"{part.ref}/{part.unit}.{channel}"


@dataclass(frozen=True, slots=True)
class SkippedAmplifier:
    """A part recognised as an amplifier but not analysed, and why."""

    part: Part
    reason: str


def _forced(part: Part) -> bool | None:
    value = part.field("Opamp")
    if value is None:
        return None
    text = value.strip().lower()
    if text in ("yes", "true", "1", "y"):
        return True
    if text in ("no", "false", "0", "n", "skip"):
        return False
    return None


def _is_supply(pin: Pin) -> bool:
    return pin.electrical_type in ("power_in", "power_out") or bool(_SUPPLY.match(pin.name))


def _inputs(pins: tuple[Pin, ...], pattern: re.Pattern[str]) -> list[Pin]:
    return [p for p in pins if not _is_supply(p) and p.electrical_type in _INPUT_TYPES
            and pattern.match(p.name.strip())]


_OUT_NAMED = re.compile(r"^(?:OUT|VOUT|V_?O|OUTPUT)(?:\d*|[+-]|[PMN])$", re.I)


def _outputs(pins: tuple[Pin, ...]) -> list[Pin]:
    """Output pins: typed outputs (open-collector ones included, as comparators have),
    or, where no pin is typed output, pins named like one (converted libraries)."""
    typed = [p for p in pins if p.electrical_type in ("output", "open_collector",
                                                      "open_emitter", "tri_state")]
    if typed:
        return typed
    return [p for p in pins if not _is_supply(p) and p.electrical_type != "input"
            and _OUT_NAMED.match(p.name.strip())]


def _channels(pins: tuple[Pin, ...]) -> list[tuple[int, Pin, Pin, Pin]]:
    """Several amplifiers drawn in one unit: IN1+/IN1-/OUT1, IN2+/IN2-/OUT2..."""
    found: dict[int, dict[str, Pin]] = {}
    for pin in pins:
        name = pin.name.strip()
        for role, pattern in (("+", _CHANNEL_PLUS), ("-", _CHANNEL_MINUS)):
            match = pattern.match(name)
            if match:
                number = int(next(g for g in match.groups() if g))
                found.setdefault(number, {})[role] = pin
        match = re.match(r"^(?:OUT|VOUT)(\d+)$", name, re.I)
        if match:
            found.setdefault(int(match.group(1)), {})["out"] = pin
    return [(n, roles["+"], roles["-"], roles["out"]) for n, roles in sorted(found.items())
            if len(roles) == 3]


def _pair_by_number(plus: list[Pin], minus: list[Pin], outs: list[Pin]
                    ) -> list[tuple[Pin, Pin, Pin]]:
    """Netlist input (no units): give each output the nearest-numbered inputs."""

    def number(pin: Pin) -> float:
        digits = re.sub(r"\D", "", pin.number)
        return float(digits) if digits else float("inf")

    free_plus, free_minus = list(plus), list(minus)
    groups = []
    for out in sorted(outs, key=number):
        if not free_plus or not free_minus:
            break
        p = min(free_plus, key=lambda q: abs(number(q) - number(out)))
        m = min(free_minus, key=lambda q: abs(number(q) - number(out)))
        free_plus.remove(p)
        free_minus.remove(m)
        groups.append((p, m, out))
    return groups


def recognise(parts: tuple[Part, ...] | list[Part]
              ) -> tuple[list[OpampUnit], list[SkippedAmplifier]]:
    """Op-amp units to analyse, and amplifiers recognised but left out (with why)."""
    units: list[OpampUnit] = []
    skipped: list[SkippedAmplifier] = []
    for part in parts:
        if part.dnp or part.is_power or len(part.pins) < 3:
            continue
        forced = _forced(part)
        if forced is False:
            continue
        plus = _inputs(part.pins, _PLUS)
        minus = _inputs(part.pins, _MINUS)
        outs = _outputs(part.pins)
        text = " ".join((part.description, part.keywords, part.lib_id))
        channels = _channels(part.pins)
        if not ((plus and minus) or channels):
            if forced:
                skipped.append(SkippedAmplifier(
                    part, "marked Opamp=yes but no +/- input pins were found"))
            continue
        if not outs and not channels and not (forced or _OPAMP_WORDS.search(text)):
            continue  # +/- pins but nothing amplifies: a cell, a bridge, a connector
        reason = _skip_reason(part, text, forced)
        if reason is None and not channels and len(plus) == len(minus) == 1 and len(outs) == 2:
            reason = "fully differential amplifier (two outputs)"
        if reason is not None:
            skipped.append(SkippedAmplifier(part, reason))
        elif channels:
            units.extend(OpampUnit(part, p, m, o, n) for n, p, m, o in channels)
        elif len(plus) == len(minus) == len(outs) == 1:
            units.append(OpampUnit(part, plus[0], minus[0], outs[0]))
        elif len(plus) == len(minus) == len(outs) > 1:
            for n, (p, m, o) in enumerate(_pair_by_number(plus, minus, outs), start=1):
                units.append(OpampUnit(part, p, m, o, n))
        else:
            skipped.append(SkippedAmplifier(
                part, f"{len(plus)} non-inverting and {len(minus)} inverting inputs with "
                      f"{len(outs)} outputs: not a simple op-amp"))
    return units, skipped


def _skip_reason(part: Part, text: str, forced: bool | None) -> str | None:
    if forced:
        return None
    if part.lib_id.lower().startswith("comparator:"):
        return "comparator"
    if any(p.electrical_type == "open_collector" or p.electrical_type == "open_emitter"
           for p in part.pins):
        return "comparator (open-collector output)"
    for pattern, reason in _NOT_ANALYSED:
        if pattern.search(text):
            return reason
    return None
