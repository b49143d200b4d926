"""Op-amp DC parameters: from symbol fields, the parts library, class estimates or
defaults (pure).

Symbol fields (case-insensitive) override the library entry found by
:mod:`schemcheck.engine.partmatch`. Every value carries its source into the report:
``field``, ``library:<entry>`` (plus how the entry was found, e.g. ``library:LX1612 via
family of LX1612AxD``, and `` (typical only)`` where the library gives only a typical
figure), ``estimate (class <type>)``, or ``default ...``.

Temperature model (``at_temperature``):

* Vos grows by TCVos per °C away from 25 °C;
* bias and offset currents: where a hot value (``Ib_hot``, ``Ios_hot``, at ``T_hot``) is
  given, they are interpolated exponentially between 25 °C and ``T_hot`` for JFET/CMOS
  inputs and linearly for bipolar and chopper ones; without one, JFET/CMOS currents
  double every 10 °C (common practice), bipolar ones are taken as flat, and chopper
  (zero-drift) ones too: their bias current is set by the input switching, not by a
  junction leakage (common practice). Below 25 °C currents are taken at their 25 °C
  value.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from typing import Any

from schemcheck.engine.estimates import CLASS_VALUES, input_type_from_text
from schemcheck.engine.partmatch import Ambiguity, Match, PartsLibrary, match_part
from schemcheck.model import Part
from schemcheck.partdata import FIGURES, parse_figure
from schemcheck.partdata import INPUT_TYPES as _INPUT_TYPES
from schemcheck.units import HOTTEST_C, ValueFormatError, parse_gain

FET_INPUTS = ("jfet", "cmos", "fet", "mosfet")
INPUT_TYPES = tuple(_INPUT_TYPES)
FET_DOUBLING_C = 10.0  # common practice: FET-input bias current doubles every 10 °C
TYPICAL_ONLY = " (typical only)"

#: name -> (kind for the unit parser, field names accepted on a symbol)
_FIELDS: dict[str, tuple[str, tuple[str, ...]]] = {
    name: (figure.kind, (figure.field,)) for name, figure in FIGURES.items()}


@dataclass(frozen=True, slots=True)
class OpampParams:
    """Maximum magnitudes at 25 °C (volts, amperes, V/°C); None where unknown.

    ``typical_only`` names the figures for which only a typical value was given (and is
    used); ``estimated`` those filled from the class values of ``estimate_class``."""

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
    typical_only: tuple[str, ...] = ()
    estimated: tuple[str, ...] = ()
    estimate_class: str | None = None
    match: Match | None = None
    ambiguity: Ambiguity | None = None

    @property
    def is_fet(self) -> bool:
        return self.input_type in FET_INPUTS

    @property
    def complete(self) -> bool:
        return self.vos is not None and self.ib is not None and self.ios is not None

    @property
    def bias_currents_matched(self) -> bool:
        """Ib+ and Ib- track each other (Ios much smaller than Ib): bipolar inputs
        without internal bias cancellation. FET/CMOS and chopper inputs, either-polarity
        Ib and Ios at least half of Ib are not matched."""
        if (self.is_fet or self.ib_either_sign
                or self.input_type in ("chopper", "bipolar-compensated")):
            return False
        if self.ib is None or self.ios is None:
            return False
        return self.ios < 0.5 * self.ib

    def missing(self) -> list[str]:
        return [name for name in ("vos", "ib", "ios") if getattr(self, name) is None]


class ParameterError(ValueFormatError):
    """A parameter field or library entry could not be read."""


def _parse(name: str, text: str, where: str) -> tuple[float, bool]:
    try:
        quantity = parse_figure(name, text, f"{name} ({where})")
    except ValueFormatError as error:
        raise ParameterError(str(error)) from None
    return abs(quantity.value), quantity.either_sign


def _input_type(text: str, where: str) -> str:
    kind = text.strip().lower()
    if kind not in INPUT_TYPES:
        raise ParameterError(f"{where}: expected {' | '.join(INPUT_TYPES)}, found {text!r}")
    return kind


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


def from_library(entry_name: str, entry: Mapping[str, Any],
                 match: Match | None = None) -> OpampParams:
    """Parameters of one parts-library entry (``[parts."NAME"]`` table, as read and
    checked by :func:`schemcheck.io.partslib.load_parts_library`). Where a figure has
    only ``typ``, that value is used and its source says ``typical only``."""
    values: dict[str, Any] = {}
    typical: dict[str, float] = {}
    source: dict[str, str] = {}
    typical_only: list[str] = []
    label = match.describe() if match is not None else f"library:{entry_name}"
    where = f"parts library {entry_name}"
    either = False
    for name in _FIELDS:
        raw = entry.get(name)
        if raw is None or raw == "":
            continue
        limits = raw if isinstance(raw, Mapping) else {"max": raw}
        limits = {k: v for k, v in limits.items() if v != ""}
        if "typ" in limits:
            typical[name], sign = _parse(name, str(limits["typ"]), where)
            either = either or (name == "ib" and sign)
        if "max" in limits:
            values[name], sign = _parse(name, str(limits["max"]), where)
            either = either or (name == "ib" and sign)
            source[name] = label
        elif "typ" in limits:
            values[name] = typical[name]
            typical_only.append(name)
            source[name] = label + TYPICAL_ONLY
    if str(entry.get("input", "")).strip():
        values["input_type"] = _input_type(str(entry["input"]), f"{where}: input")
        source["input_type"] = label
        either = either or values["input_type"] == "bipolar-compensated"
    if entry.get("aol", "") != "":
        try:
            values["aol"] = parse_gain(str(entry["aol"]))
        except ValueFormatError as error:
            raise ParameterError(f"{where}: {error}") from None
        source["aol"] = label
    if entry.get("t_hot", "") != "":
        values["t_hot"] = _hot_temperature(str(entry["t_hot"]), f"{where}: t_hot")
        source["t_hot"] = label
    if "ib_either_sign" in entry:
        either = bool(entry["ib_either_sign"])
    return OpampParams(**values, ib_either_sign=either, typical=typical, source=source,
                       library_entry=entry_name, typical_only=tuple(typical_only), match=match)


def library_key(part: Part, library: PartsLibrary | Mapping[str, Mapping[str, Any]]) -> str | None:
    """The library entry for ``part`` (see :mod:`schemcheck.engine.partmatch`), or None."""
    found, _ = match_part(part, PartsLibrary.of(library))
    return found.entry if found is not None else None


def resolve(part: Part, library: PartsLibrary | Mapping[str, Mapping[str, Any]] | None,
            *, estimate: bool = False) -> OpampParams:
    """Parameters of ``part``: library entry first, symbol fields over it, then (when
    ``estimate``) class estimates for what is still missing, then the defaults."""
    parts_library = PartsLibrary.of(library)
    found, ambiguity = match_part(part, parts_library)
    if found is not None:
        params = from_library(found.entry, parts_library.entries[found.entry], found)
    else:
        params = OpampParams(ambiguity=ambiguity)
    changes: dict[str, Any] = {}
    source = dict(params.source)
    typical_only = list(params.typical_only)
    either = params.ib_either_sign
    for name, (_, names) in _FIELDS.items():
        for field_name in names:
            text = part.field(field_name)
            if text is not None and text.strip():
                changes[name], sign = _parse(name, text, f"field {field_name} of {part.ref}")
                if name == "ib":
                    either = sign
                source[name] = "field"
                if name in typical_only:
                    typical_only.remove(name)
    text = part.field("Input")
    if text is not None and text.strip():
        changes["input_type"] = _input_type(text, f"field Input of {part.ref}")
        source["input_type"] = "field"
        either = either or changes["input_type"] == "bipolar-compensated"
    elif params.input_type == "unknown":
        for words, label in ((part.description, "symbol description"),
                             (part.keywords, "symbol keywords")):
            kind = input_type_from_text(words)
            if kind is not None:
                changes["input_type"] = kind
                source["input_type"] = label
                either = either or kind == "bipolar-compensated"
                break
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
    params = replace(params, **changes, ib_either_sign=either, source=source,
                     typical_only=tuple(typical_only))
    return with_defaults(params, estimate=estimate)


def estimate_label(kind: str) -> str:
    """The source of a class estimate, as every report shows it."""
    return f"estimate (class {kind})"


def with_defaults(params: OpampParams, *, estimate: bool = False) -> OpampParams:
    """Fill what can be filled, saying so in ``source``: Ios missing but Ib known ->
    Ios = Ib; then, when ``estimate`` and the input type is known, the missing Vos, Ib,
    Ios and TCVos from the class values; TCVos still missing -> 0 (no drift data)."""
    source = dict(params.source)
    changes: dict[str, Any] = {}
    if params.ios is None and params.ib is not None:
        changes["ios"] = params.ib
        source["ios"] = "default (Ios = Ib)"
        if "ib" in params.typical_only:  # taken from a typical figure, so typical too
            changes["typical_only"] = (*params.typical_only, "ios")
    estimated: list[str] = []
    if estimate and params.input_type in CLASS_VALUES:
        values = CLASS_VALUES[params.input_type]
        for name in ("vos", "ib", "ios", "tcvos"):
            if getattr(params, name) is None and name not in changes:
                changes[name] = values[name]
                source[name] = estimate_label(params.input_type)
                estimated.append(name)
        if estimated:
            changes["estimated"] = tuple(estimated)
            changes["estimate_class"] = params.input_type
    if params.tcvos is None and "tcvos" not in changes and (
            params.vos is not None or "vos" in changes):
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
            if temp > t_hot and hot < at25:
                # past the last figure given a falling current is held there: a maximum
                # is not extrapolated down (linearly it would cross zero)
                return hot
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
    fet = params.is_fet  # chopper and bipolar inputs: linear between hot values, else flat
    return AtTemperature(
        temp_c,
        vos,
        _current_at(params.ib, params.ib_hot, t_hot, temp_c, fet),
        _current_at(params.ios, params.ios_hot, t_hot, temp_c, fet),
    )
