"""A resistive part's value: which field says it, and what it says (pure).

Where the value comes from, first that reads:

1. the settings, by reference (``[values] R13 = "1M"``);
2. the ``Value`` field in any notation :func:`schemcheck.units.read_resistance` reads;
3. where the Value holds something else (a part number), the fields ``Sim.Value`` or
   ``Resistance`` (the editor's simulator field, and a common field of vendor libraries);
4. the project's house notations from the settings, tried in order on the Value
   (``match = '^t(.+)$'``, ``value = '\\1'``: ``t2k`` is a 2 kΩ trimmer).

A value none of these reads is :class:`UnreadableValue`: the part is never opened silently.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from dataclasses import dataclass, field

from schemcheck.errors import SchemcheckError
from schemcheck.model import Part
from schemcheck.units import NOT_FITTED, ValueFormatError, read_resistance

#: Fields that may carry a resistance where the Value holds a part number.
SIM_FIELDS = ("Sim.Value", "Resistance")


@dataclass(frozen=True, slots=True)
class ValueRules:
    """What the settings say about values: by reference, and house notations as
    (regular expression over the whole Value, template of what it means)."""

    by_ref: Mapping[str, str] = field(default_factory=dict)
    notations: tuple[tuple[str, str], ...] = ()


@dataclass(frozen=True, slots=True)
class PartValue:
    """A read value: ohms (None: not fitted), the field it came from, its text, and a
    potentiometer's taper where one was written."""

    ohms: float | None
    field: str
    text: str
    taper: str = ""


class UnreadableValue(SchemcheckError, ValueError):
    """No field of the part gives a value the tool can read."""

    def __init__(self, ref: str, field_name: str, text: str, why: str) -> None:
        super().__init__(f"{ref} {field_name} {text!r} could not be read: {why}")
        self.ref = ref
        self.field = field_name
        self.text = text
        self.why = why


def part_value(part: Part, rules: ValueRules | None = None, *, pot: bool = False) -> PartValue:
    """The resistance of ``part`` (ohms; a potentiometer's end-to-end value)."""
    rules = rules or ValueRules()
    given = rules.by_ref.get(part.ref)
    if given is not None:
        return _read(given, "settings", pot)
    try:
        return _read(part.value, "Value", pot)
    except ValueFormatError as error:
        first_error = error
    for name in SIM_FIELDS:
        text = part.field(name)
        if text and text.strip():
            try:
                return _read(text, name, pot)
            except ValueFormatError:
                continue
    for pattern, template in rules.notations:
        match = re.fullmatch(pattern, part.value.strip())
        if match:
            try:
                return _read(match.expand(template), "Value", pot, part.value)
            except (ValueFormatError, re.error):
                continue
    raise UnreadableValue(part.ref, "Value", part.value, _why(first_error))


def is_not_fitted(value: str) -> bool:
    """True where a Value says the part is not fitted (``DNP``, ``NC``, ``n.f.``)."""
    words = value.strip().split()
    return bool(words) and words[0].upper() in NOT_FITTED


def _read(text: str, field_name: str, pot: bool, shown: str | None = None) -> PartValue:
    reading = read_resistance(text, f"field {field_name}", taper=pot)
    return PartValue(reading.ohms, field_name, shown if shown is not None else text,
                     reading.taper)


def _why(error: ValueFormatError) -> str:
    text = str(error)
    if "ambiguous" in text:
        return "ambiguous, milli-ohm or mega-ohm"
    return "not a resistance in any notation the tool reads"
