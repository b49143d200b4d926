"""Recognise op-amp amplifier units among the parts (pure).

A unit is an op-amp when it has one non-inverting input, one inverting input and one
output, judged from pin names *and* electrical types *and* the part's description:

* inputs are pins named ``+``/``-``, ``IN+``/``IN-``, ``+IN``/``-IN``, ``INP``/``INN``,
  ``NI``/``INV`` (and numbered forms ``IN1+``...), of type input, passive or
  bidirectional (converted libraries mark every pin bidirectional); supply pins
  (``V+``, ``VCC``, power types) are never inputs;
* the output is the one pin of type output (or, where every pin is bidirectional, the
  one named ``OUT``);
* a feedback pin (``FB``, internally the output) is not an output; flag, status and
  monitor outputs beside the amplifier's own output do not count; two outputs make a
  fully differential amplifier only when they are named as a pair (``OUT+``/``OUT-``);
* comparators, transconductance, instrumentation, difference, current-sense, buffer,
  fully differential, variable-gain, gain-control (VCA), isolation and fixed-gain
  amplifiers are recognised as amplifiers but not analysed, and listed: by the editor's
  library they come from (``Comparator``, ``Amplifier_Instrumentation``,
  ``Amplifier_Difference``, ``Amplifier_Current``, ``Amplifier_Buffer``) or by words of
  their description, keywords, value or symbol name (project libraries often have no
  description);
* battery cells, diode bridges and other parts with ``+``/``-`` pins have no output and
  are not amplifiers at all.

The field ``Opamp`` (case-insensitive) forces (``yes``) or forbids (``no``) recognition.
"""

from __future__ import annotations

import functools
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
#: Libraries of the editor whose parts look like op-amps but are not (by library nickname).
_NOT_OPAMP_LIBRARIES = {
    "comparator": "comparator",
    "amplifier_instrumentation": "instrumentation amplifier",
    "amplifier_difference": "difference amplifier",
    "amplifier_current": "current-sense amplifier",
    "amplifier_buffer": "buffer amplifier",
}
#: Searched in the description, keywords, value and symbol name (underscores as spaces).
_NOT_ANALYSED = [
    (re.compile(r"comparator", re.I), "comparator"),
    (re.compile(r"transconductance|\bOTA\b", re.I), "transconductance amplifier"),
    (re.compile(r"instrumentation|\bin-?amp\b", re.I), "instrumentation amplifier"),
    (re.compile(r"fully[- ]differential|differential (?:amplifier|ADC driver)|\bFDA\b", re.I),
     "fully differential amplifier"),
    (re.compile(r"variable[- ]gain|\bVGA\b|programmable[- ]gain|\bPGA\b", re.I),
     "variable-gain amplifier"),
    (re.compile(r"current[- ]?sens(?:e|or|ing)|current[- ]?shunt|shunt[- ]?monitor|"
                r"current[- ]?monitor", re.I), "current-sense amplifier"),
    (re.compile(r"difference amplifier", re.I), "difference amplifier"),
    (re.compile(r"\bVCA\b|voltage[- ]controlled amplifier|gain[- ]control|"
                r"dynamic range processor", re.I), "gain-control amplifier (VCA)"),
    (re.compile(r"fixed[- ]gain|preamplifier", re.I), "fixed-gain amplifier"),
    (re.compile(r"\bbuffer\b", re.I), "buffer amplifier"),
    (re.compile(r"isolat(?:ion|ed) amplifier", re.I), "isolation amplifier"),
    (re.compile(r"line (?:driver|receiver)", re.I), "line driver"),
]
#: A transimpedance-only part (current in, voltage out), unless it says it is an op-amp.
_TRANSIMPEDANCE = re.compile(r"transimpedance amplifier", re.I)
_OPAMP_NAMED = re.compile(r"op[- ]?amp|operational amplifier", re.I)
_OPAMP_WORDS = re.compile(r"op[- ]?amp|operational amplifier|amplifier", re.I)
#: A feedback pin: internally the output (``FB``), not a second output.
_FEEDBACK = re.compile(r"^(?:FB|V_?FB|FEEDBACK)$", re.I)
#: The amplifier's own output, among typed outputs that also carry flags and monitors.
_MAIN_OUT = re.compile(r"^(?:~|OUT|VOUT|V_?O|OUTPUT)?\d*$", re.I)


@dataclass(frozen=True, slots=True)
class OpampUnit:
    """One amplifier of a part: the pins that make it an op-amp."""

    part: Part
    plus: Pin
    minus: Pin
    out: Pin
    channel: int | None = None  # several amplifiers drawn in one unit
    feedback: Pin | None = None  # a feedback pin, internally the output

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
    #: a comparator's pins as an op-amp unit, where it has one of each (it is analysed as
    #: an op-amp when it is wired with negative DC feedback)
    unit: OpampUnit | None = None


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
    or, where no pin is typed output, pins named like one (converted libraries). A
    feedback pin is not an output; where a flag, status or monitor output sits beside
    the amplifier's own output, only the own output (``OUT``, ``~``) counts."""
    typed = [p for p in pins if p.electrical_type in ("output", "open_collector",
                                                      "open_emitter", "tri_state")
             and not _FEEDBACK.match(p.name.strip())]
    if not typed:
        return [p for p in pins if not _is_supply(p) and p.electrical_type != "input"
                and _OUT_NAMED.match(p.name.strip())]
    main = [p for p in typed if _MAIN_OUT.match(p.name.strip())]
    if main and len(main) < len(typed) and not _paired(typed):
        return main
    return typed


def _feedback_pin(pins: tuple[Pin, ...]) -> Pin | None:
    found = [p for p in pins if _FEEDBACK.match(p.name.strip())]
    return found[0] if len(found) == 1 else None


def _paired(outs: list[Pin]) -> bool:
    """Two outputs named as a differential pair: ``+``/``-``, ``OUT+``/``OUT-``,
    ``OUTP``/``OUTN``, ``+OUT``/``-OUT``, ``O``/``~{O}`` (overbar)."""
    if len(outs) != 2:
        return False
    a, b = (re.sub(r"^[+-]|[+-]$|(?<=\w)[PN]$", "#", p.name.strip().upper()) for p in outs)
    if a == b and "#" in a and outs[0].name.strip() != outs[1].name.strip():
        return True
    bare = [re.sub(r"^~\{(.*)\}$", r"\1", p.name.strip()) for p in outs]
    return bare[0] == bare[1] and outs[0].name.strip() != outs[1].name.strip()


def output_pins(part: Part) -> list[Pin]:
    """The output pins of an amplifier (as :func:`recognise` finds them)."""
    channels = _channels(part.pins)
    if channels:
        return [out for _, _, _, out in channels]
    return _outputs(part.pins)


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


def _pair_by_number(plus: tuple[Pin, ...], minus: tuple[Pin, ...], outs: tuple[Pin, ...]
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


@dataclass(frozen=True, slots=True)
class _Reading:
    """What a symbol's pins and words say (the same for every placement of it)."""

    plus: tuple[Pin, ...]
    minus: tuple[Pin, ...]
    outs: tuple[Pin, ...]
    channels: tuple[tuple[int, Pin, Pin, Pin], ...]
    feedback: Pin | None
    #: "" where the symbol is no amplifier, "skip" where it is one left out (``reason``)
    verdict: str
    reason: str | None


@functools.lru_cache(maxsize=4096)
def _read_symbol(pins: tuple[Pin, ...], description: str, keywords: str, lib_id: str,
                 value: str, forced: bool | None) -> _Reading:
    plus = tuple(_inputs(pins, _PLUS))
    minus = tuple(_inputs(pins, _MINUS))
    outs = tuple(_outputs(pins))
    name = lib_id.rpartition(":")[2].replace("_", " ")
    text = " ".join((description, keywords, lib_id, value, name))
    channels = tuple(_channels(pins))
    feedback = _feedback_pin(pins)
    if not ((plus and minus) or channels):
        if forced:
            return _Reading(plus, minus, outs, channels, feedback, "skip",
                            "marked Opamp=yes but no +/- input pins were found")
        return _Reading(plus, minus, outs, channels, feedback, "", None)
    if not outs and not channels and not (forced or _OPAMP_WORDS.search(text)):
        # +/- pins but nothing amplifies: a cell, a bridge, a connector
        return _Reading(plus, minus, outs, channels, feedback, "", None)
    reason = _skip_reason(lib_id, description, pins, text, forced)
    if reason is None and not channels and len(plus) == len(minus) == 1 and len(outs) == 2:
        reason = ("fully differential amplifier (two outputs)" if _paired(list(outs)) else
                  "1 non-inverting and 1 inverting input with 2 outputs: not a simple "
                  "op-amp")
    return _Reading(plus, minus, outs, channels, feedback,
                    "amplifier" if reason is None else "skip", reason)


def recognise(parts: tuple[Part, ...] | list[Part]
              ) -> tuple[list[OpampUnit], list[SkippedAmplifier]]:
    """Op-amp units to analyse, and amplifiers recognised but left out (with why). A
    symbol's pins and words are read once however often it is placed."""
    units: list[OpampUnit] = []
    skipped: list[SkippedAmplifier] = []
    for part in parts:
        if part.dnp or part.is_power or len(part.pins) < 3:
            continue
        forced = _forced(part)
        if forced is False:
            continue
        found = _read_symbol(part.pins, part.description, part.keywords, part.lib_id,
                             part.value, forced)
        if not found.verdict:
            continue
        plus, minus, outs, channels = found.plus, found.minus, found.outs, found.channels
        reason = found.reason
        if reason is not None:
            single = (OpampUnit(part, plus[0], minus[0], outs[0])
                      if reason.startswith("comparator") and not channels
                      and len(plus) == len(minus) == len(outs) == 1 else None)
            skipped.append(SkippedAmplifier(part, reason, single))
        elif channels:
            units.extend(OpampUnit(part, p, m, o, n) for n, p, m, o in channels)
        elif len(plus) == len(minus) == len(outs) == 1:
            units.append(OpampUnit(part, plus[0], minus[0], outs[0], feedback=found.feedback))
        elif len(plus) == len(minus) == len(outs) > 1:
            for n, (p, m, o) in enumerate(_pair_by_number(plus, minus, outs), start=1):
                units.append(OpampUnit(part, p, m, o, n))
        else:
            skipped.append(SkippedAmplifier(
                part, f"{len(plus)} non-inverting and {len(minus)} inverting inputs with "
                      f"{len(outs)} outputs: not a simple op-amp"))
    return units, skipped


def described_as_opamp(part: Part) -> bool:
    """True where the part says it is an op-amp: from the editor's op-amp library, the
    field ``Opamp=yes``, or "op-amp"/"operational amplifier" in its description, keywords,
    value or symbol name."""
    if _forced(part):
        return True
    library = part.lib_id.partition(":")[0].lower() if ":" in part.lib_id else ""
    if library == "amplifier_operational":
        return True
    name = part.lib_id.rpartition(":")[2].replace("_", " ")
    text = " ".join((part.description, part.keywords, part.value, name))
    return bool(_OPAMP_NAMED.search(text) or re.search(r"\bopamp", text, re.I))


def _skip_reason(lib_id: str, description: str, pins: tuple[Pin, ...], text: str,
                 forced: bool | None) -> str | None:
    if forced:
        return None
    library = lib_id.partition(":")[0].lower() if ":" in lib_id else ""
    if library in _NOT_OPAMP_LIBRARIES:
        return _NOT_OPAMP_LIBRARIES[library]
    if any(p.electrical_type == "open_collector" or p.electrical_type == "open_emitter"
           for p in pins):
        return "comparator (open-collector output)"
    for pattern, reason in _NOT_ANALYSED:
        if pattern.search(text):
            return reason
    if _TRANSIMPEDANCE.search(text) and not _OPAMP_NAMED.search(description):
        return "transimpedance amplifier"
    return None
