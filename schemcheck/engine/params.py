"""Op-amp DC parameters: from symbol fields, the parts library, or defaults (pure).

Symbol fields (case-insensitive) override the library. Every value carries its source
(``field``, ``library:<entry>``, ``default``) into the report.

Temperature model (``at_temperature``):

* Vos grows by TCVos per °C away from 25 °C;
* bias and offset currents: where a hot value (``Ib_hot``, ``Ios_hot``, at ``T_hot``) is
  given, they are interpolated exponentially between 25 °C and ``T_hot`` for FET/CMOS
  inputs and linearly for bipolar ones; without one, FET-input currents double every
  10 °C (common practice) and bipolar ones are taken as flat. Below 25 °C FET currents
  are taken at their 25 °C value (they only fall), bipolar ones as flat.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from typing import Any, Mapping

from schemcheck.model import Part
from schemcheck.units import HOTTEST_C, ValueFormatError, parse_gain, parse_quantity

FET_INPUTS = ("jfet", "cmos", "fet", "mosfet")
INPUT_TYPES = ("bipolar", "jfet", "cmos")
FET_DOUBLING_C = 10.0  # common practice: FET-input bias current doubles every 10 °C

#: name -> (kind for the unit parser, field names accepted on a symbol)
_FIELDS: dict[str, tuple[str, tuple[str, ...]]] = {
    "vos": ("volt", ("Vos",)),
    "ib": ("amp", ("Ib",)),
    "ios": ("amp", ("Ios",)),
    "tcvos": ("volt_per_deg", ("TCVos",)),
    "ib_hot": ("amp", ("Ib_hot",)),
    "ios_hot": ("amp", ("Ios_hot",)),
}


@dataclass(frozen=True, slots=True)
class OpampParams:
    """Maximum magnitudes at 25 °C (volts, amperes, V/°C); None where unknown."""

    vos: float | None = None
    ib: float | None = None
    ios: float | None = None
    tcvos: float | None = None
    ib_hot: float | None = None
    ios_hot: float | None = None
    t_hot: float | None = None
    input_type: str = "unknown"
    aol: float | None = None
    ib_either_sign: bool = False
    typical: Mapping[str, float] = field(default_factory=dict)
    source: Mapping[str, str] = field(default_factory=dict)
    library_entry: str | None = None

    @property
    def is_fet(self) -> bool:
        return self.input_type in FET_INPUTS

    @property
    def complete(self) -> bool:
        return self.vos is not None and self.ib is not None and self.ios is not None

    @property
    def bias_currents_matched(self) -> bool:
        """Ib+ and Ib- track each other (Ios much smaller than Ib): bipolar inputs
        without internal bias cancellation. FET/CMOS inputs, either-polarity Ib and
        Ios at least half of Ib are not matched."""
        if self.is_fet or self.ib_either_sign:
            return False
        if self.ib is None or self.ios is None:
            return False
        return self.ios < 0.5 * self.ib

    def missing(self) -> list[str]:
        return [name for name in ("vos", "ib", "ios") if getattr(self, name) is None]


class ParameterError(ValueFormatError):
    """A parameter field or library entry could not be read. ``key`` names the library
    entry's key at fault, where known."""

    key: str | None = None


def _parse(name: str, text: str, where: str) -> tuple[float, bool]:
    kind, _ = _FIELDS[name]
    try:
        quantity = parse_quantity(text, kind, what=f"{name} ({where})")
    except ValueFormatError as error:
        raise ParameterError(str(error)) from None
    return abs(quantity.value), quantity.either_sign


def _library_text(entry_name: str, key: str, raw: Any) -> str:
    """A library value written as text or a plain number (TOML), as text."""
    if isinstance(raw, bool) or not isinstance(raw, (str, int, float)):
        raise ParameterError(f"parts library {entry_name}: expected {key} as text like "
                             f"\"1mV\" or a number, found {raw!r}")
    return str(raw)


def _hot_temperature(text: str, where: str) -> float:
    """``T_hot`` in °C: above 25 °C (hot values are interpolated from 25 °C to it) and at
    most :data:`HOTTEST_C`."""
    try:
        value = float(text.replace("°C", "").strip())
    except ValueError:
        raise ParameterError(f"{where}: expected a temperature in °C, found {text!r}") from None
    if not (math.isfinite(value) and 25.0 < value <= HOTTEST_C):
        raise ParameterError(f"{where}: expected a temperature above 25 °C and at most "
                             f"{HOTTEST_C:g} °C, found {text!r}")
    return value


def from_library(entry_name: str, entry: Mapping[str, Any]) -> OpampParams:
    """Parameters of one parts-library entry (``[parts."NAME"]`` table). A value of the
    wrong type (``t_hot = "hot"``, ``aliases = 5``, ``ib_either_sign = "no"``) raises
    :class:`ParameterError` naming the entry and the key (also in its ``key``)."""
    reading: list[str] = []
    try:
        return _from_library(entry_name, entry, reading)
    except ParameterError as error:
        error.key = reading[-1] if reading else None
        raise


def _from_library(entry_name: str, entry: Mapping[str, Any], reading: list[str]) -> OpampParams:
    values: dict[str, Any] = {}
    typical: dict[str, float] = {}
    source: dict[str, str] = {}
    label = f"library:{entry_name}"
    either = False
    for name in _FIELDS:
        raw = entry.get(name)
        if raw is None:
            continue
        reading.append(name)
        limits = raw if isinstance(raw, Mapping) else {"max": raw}
        unknown = sorted(set(limits) - {"typ", "max"})
        if unknown:
            raise ParameterError(f"parts library {entry_name}: {name} has the key "
                                 f"{unknown[0]!r}; expected typ and max")
        if "max" in limits:
            text = _library_text(entry_name, f"{name}.max", limits["max"])
            values[name], sign = _parse(name, text, f"parts library {entry_name}")
            either = either or (name == "ib" and sign)
            source[name] = label
        if "typ" in limits:
            text = _library_text(entry_name, f"{name}.typ", limits["typ"])
            typical[name], _ = _parse(name, text, f"parts library {entry_name}")
    if "input" in entry:
        reading.append("input")
        kind = str(entry["input"]).strip().lower() if isinstance(entry["input"], str) else None
        if kind not in INPUT_TYPES:
            raise ParameterError(f"parts library {entry_name}: expected input = "
                                 f"{' | '.join(INPUT_TYPES)}, found {entry['input']!r}")
        values["input_type"] = kind
        source["input_type"] = label
    if "aol" in entry:
        reading.append("aol")
        try:
            values["aol"] = parse_gain(_library_text(entry_name, "aol", entry["aol"]))
        except ValueFormatError as error:
            raise ParameterError(f"parts library {entry_name}: {error}") from None
        source["aol"] = label
    if "t_hot" in entry:
        reading.append("t_hot")
        values["t_hot"] = _hot_temperature(_library_text(entry_name, "t_hot", entry["t_hot"]),
                                           f"parts library {entry_name}: t_hot")
        source["t_hot"] = label
    if "ib_either_sign" in entry:
        reading.append("ib_either_sign")
        if not isinstance(entry["ib_either_sign"], bool):
            raise ParameterError(f"parts library {entry_name}: expected ib_either_sign = true "
                                 f"or false, found {entry['ib_either_sign']!r}")
        either = entry["ib_either_sign"]
    aliases = entry.get("aliases", [])
    reading.append("aliases")
    if not isinstance(aliases, list) or not all(isinstance(a, str) for a in aliases):
        raise ParameterError(f"parts library {entry_name}: expected aliases = a list of names "
                             f"like [\"OPX1A\"], found {aliases!r}")
    for key in ("description", "rule", "measured"):
        reading.append(key)
        if key in entry and not isinstance(entry[key], str):
            raise ParameterError(f"parts library {entry_name}: expected {key} as text, found "
                                 f"{entry[key]!r}")
    return OpampParams(**values, ib_either_sign=either, typical=typical, source=source,
                       library_entry=entry_name)


def library_key(part: Part, library: Mapping[str, Mapping[str, Any]]) -> str | None:
    """The library entry for ``part``: by a part-number field, else by its value;
    entry names and their ``aliases`` match case-insensitively."""
    index: dict[str, str] = {}
    for name, entry in library.items():
        index[name.casefold()] = name
        for alias in entry.get("aliases", ()) or ():
            index[str(alias).casefold()] = name
    for field_name in ("MPN", "Part Number", "PartNumber", "Part_Number",
                       "Manufacturer_Part_Number", "Value"):
        value = part.field(field_name)
        if value and value.strip().casefold() in index:
            return index[value.strip().casefold()]
    return None


def resolve(part: Part, library: Mapping[str, Mapping[str, Any]]) -> OpampParams:
    """Parameters of ``part``: library entry first, symbol fields over it."""
    key = library_key(part, library)
    params = from_library(key, library[key]) if key is not None else OpampParams()
    changes: dict[str, Any] = {}
    source = dict(params.source)
    either = params.ib_either_sign
    for name, (_, names) in _FIELDS.items():
        for field_name in names:
            text = part.field(field_name)
            if text is not None and text.strip():
                changes[name], sign = _parse(name, text, f"field {field_name} of {part.ref}")
                if name == "ib":
                    either = sign
                source[name] = "field"
    text = part.field("Input")
    if text is not None and text.strip():
        kind = text.strip().lower()
        if kind not in INPUT_TYPES:
            raise ParameterError(f"field Input of {part.ref}: expected "
                                 f"{' | '.join(INPUT_TYPES)}, found {text!r}")
        changes["input_type"] = kind
        source["input_type"] = "field"
    text = part.field("Aol")
    if text is not None and text.strip():
        try:
            changes["aol"] = parse_gain(text, what=f"field Aol of {part.ref}")
        except ValueFormatError as error:
            raise ParameterError(str(error)) from None
        source["aol"] = "field"
    text = part.field("T_hot")
    if text is not None and text.strip():
        changes["t_hot"] = _hot_temperature(text, f"field T_hot of {part.ref}")
        source["t_hot"] = "field"
    params = replace(params, **changes, ib_either_sign=either, source=source)
    return with_defaults(params)


def with_defaults(params: OpampParams) -> OpampParams:
    """Fill what can be filled conservatively, saying so in ``source``:
    Ios missing but Ib known -> Ios = Ib; TCVos missing -> 0 (no drift data)."""
    source = dict(params.source)
    changes: dict[str, Any] = {}
    if params.ios is None and params.ib is not None:
        changes["ios"] = params.ib
        source["ios"] = "default (Ios = Ib)"
    if params.tcvos is None and params.vos is not None:
        changes["tcvos"] = 0.0
        source["tcvos"] = "default (no drift data: 0)"
    if params.input_type == "unknown":
        source.setdefault("input_type", "default (unknown)")
    if not changes:
        return replace(params, source=source)
    return replace(params, **changes, source=source)


@dataclass(frozen=True, slots=True)
class AtTemperature:
    """Maximum magnitudes at one temperature."""

    temp_c: float
    vos: float | None
    ib: float | None
    ios: float | None


def _current_at(at25: float | None, hot: float | None, t_hot: float, temp: float,
                fet: bool) -> float | None:
    if at25 is None:
        return None
    if temp <= 25.0:
        return at25
    try:
        if hot is not None and t_hot > 25.0 and hot > 0 and at25 > 0:
            fraction = (temp - 25.0) / (t_hot - 25.0)
            if fet:
                return at25 * (hot / at25) ** fraction
            return at25 + (hot - at25) * fraction
        if fet:
            return at25 * 2.0 ** ((temp - 25.0) / FET_DOUBLING_C)
    except OverflowError:  # extrapolated far beyond T_hot: no finite figure
        return math.inf
    return at25


def at_temperature(params: OpampParams, temp_c: float, range_top_c: float) -> AtTemperature:
    """Parameters at ``temp_c``; hot values apply at ``t_hot`` (or, when the part does
    not say, at the top of the operating range ``range_top_c``)."""
    t_hot = params.t_hot if params.t_hot is not None else range_top_c
    vos = None
    if params.vos is not None:
        vos = params.vos + (params.tcvos or 0.0) * abs(temp_c - 25.0)
    fet = params.is_fet
    return AtTemperature(
        temp_c,
        vos,
        _current_at(params.ib, params.ib_hot, t_hot, temp_c, fet),
        _current_at(params.ios, params.ios_hot, t_hot, temp_c, fet),
    )
